//go:build !unix

package save

import (
	"errors"
	"io/fs"
	"syscall"
)

// chownLike does nothing where files have no Unix owner.
func chownLike(string, fs.FileInfo) {}

// writable reports whether the file's permissions allow changes (on
// Windows, the read-only attribute clears the write bits).
func writable(_ string, info fs.FileInfo) bool { return info.Mode().Perm()&0o200 != 0 }

// Windows system error codes (winerror.h, from memory): ERROR_DISK_FULL
// 112, ERROR_HANDLE_DISK_FULL 39, ERROR_FILENAME_EXCED_RANGE 206,
// ERROR_WRITE_PROTECT 19.
func diskCause(err error) diskFailure {
	var n syscall.Errno
	if !errors.As(err, &n) {
		return otherFailure
	}
	switch n {
	case 112, 39:
		return diskFull
	case 206:
		return nameTooLong
	case 19:
		return diskReadOnly
	}
	return otherFailure
}

// processAlive cannot tell here: a lock is stale only by its age.
func processAlive(int) bool { return true }

// linkCount is 1 where the system does not say (Windows' hard links are
// rare on a user's documents).
func linkCount(fs.FileInfo) int { return 1 }
