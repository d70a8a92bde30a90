//go:build unix

package save

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"syscall"
	"time"

	"slopewise/internal/io/table"
)

// takeRunLock takes the lock for path; the returned function lets it go.
// Where the file system cannot lock (some network shares), the save goes
// on without it, as it did before there was one.
func takeRunLock(path string) (func(), error) {
	name := runLockName(path)
	deadline := time.Now().Add(lockWait)
	for {
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE, 0o644)
		if err != nil {
			// A folder Slopewise may not write to: the save says so
			// itself when it makes its temporary file.
			return func() {}, nil
		}
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if err == nil {
			// The file locked must still be the one of that name: the run
			// before may have removed it, letting go, between our open and
			// our lock; then lock the new one.
			fi, e1 := f.Stat()
			pi, e2 := os.Stat(name)
			if e1 != nil || e2 != nil || !os.SameFile(fi, pi) {
				f.Close()
				continue
			}
			f.Truncate(0)
			fmt.Fprintf(f, "%d %d\n", os.Getpid(), time.Now().Unix())
			return func() {
				os.Remove(name) // while still locked, so no one locks a removed file unawares
				f.Close()
			}, nil
		}
		f.Close()
		if !errors.Is(err, syscall.EWOULDBLOCK) && !errors.Is(err, syscall.EAGAIN) {
			return func() {}, nil
		}
		if time.Now().After(deadline) {
			return nil, &table.Error{Path: path, Cause: table.ErrOpenElsewhere, Detail: fmt.Sprintf("another Slopewise run has been writing into it for more than %s (its lock is %s)", lockWait, filepath.Base(name))}
		}
		time.Sleep(lockPoll)
	}
}
