//go:build !unix

package save

import (
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"slopewise/internal/io/table"
)

// takeRunLock takes the lock for path; the returned function lets it go.
func takeRunLock(path string) (func(), error) {
	name := runLockName(path)
	deadline := time.Now().Add(lockWait)
	for {
		f, err := os.OpenFile(name, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		if err == nil {
			fmt.Fprintf(f, "%d %d\n", os.Getpid(), time.Now().Unix())
			f.Close()
			return func() { os.Remove(name) }, nil
		}
		if !os.IsExist(err) {
			// A folder Slopewise may not write to: the save says so
			// itself when it makes its temporary file.
			return func() {}, nil
		}
		if staleLock(name) {
			os.Remove(name)
			continue
		}
		if time.Now().After(deadline) {
			return nil, &table.Error{Path: path, Cause: table.ErrOpenElsewhere, Detail: fmt.Sprintf("another Slopewise run has been writing into it for more than %s (its lock is %s)", lockWait, filepath.Base(name))}
		}
		time.Sleep(lockPoll)
	}
}

// staleLock reports a lock left by a run that has ended.
func staleLock(name string) bool {
	info, err := os.Stat(name)
	if err != nil {
		return false
	}
	if time.Since(info.ModTime()) > lockStale {
		return true
	}
	body, err := os.ReadFile(name)
	if err != nil {
		return false
	}
	fields := strings.Fields(string(body))
	if len(fields) < 1 {
		return time.Since(info.ModTime()) > time.Second // being written, or empty
	}
	pid, err := strconv.Atoi(fields[0])
	return err == nil && pid > 0 && pid != os.Getpid() && !processAlive(pid)
}
