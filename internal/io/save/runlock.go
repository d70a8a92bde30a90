package save

import (
	"path/filepath"
	"time"
)

// Two saves into one workbook at once (two commands, or the window and a
// command) are serialised by a lock of Slopewise's own beside the file,
// ".NAME.slopewise.lock", holding the process id and the time. A save
// waits for another to finish, up to lockWait, then refuses. On Unix the
// lock is flock(2) on that file, which the system lets go when a process
// ends, so no lock outlives its run (runlock_unix.go); elsewhere it is the
// file's existence (O_EXCL), taken over when its process has gone or it
// is older than lockStale (runlock_other.go).
const (
	lockWait  = 30 * time.Second
	lockStale = 10 * time.Minute
	lockPoll  = 100 * time.Millisecond
)

// runLockName is the lock's path for a file.
func runLockName(path string) string {
	dir, base := filepath.Split(path)
	return filepath.Join(dir, "."+base+".slopewise.lock")
}
