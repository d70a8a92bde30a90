//go:build unix

package save

import (
	"errors"
	"io/fs"
	"os"
	"syscall"
)

// chownLike gives path the owner of orig where the system allows it, so a
// file rewritten by an administrator keeps its owner. Failure is harmless.
func chownLike(path string, orig fs.FileInfo) {
	if st, ok := orig.Sys().(*syscall.Stat_t); ok {
		_ = os.Chown(path, int(st.Uid), int(st.Gid))
	}
}

// writable reports whether the user may change the file: some write
// permission bit set (a file of mode 0444 is read-only even for an
// administrator, as spreadsheet programs treat it) and access granted.
func writable(path string, info fs.FileInfo) bool {
	if info.Mode().Perm()&0o222 == 0 {
		return false
	}
	return syscall.Access(path, 2 /* W_OK */) == nil
}

// diskCause tells the failures that have a message of their own.
func diskCause(err error) diskFailure {
	switch {
	case errors.Is(err, syscall.ENOSPC), errors.Is(err, syscall.EDQUOT):
		return diskFull
	case errors.Is(err, syscall.ENAMETOOLONG):
		return nameTooLong
	case errors.Is(err, syscall.EROFS):
		return diskReadOnly
	}
	return otherFailure
}

// linkCount is the number of names (hard links) the file has.
func linkCount(info fs.FileInfo) int {
	if st, ok := info.Sys().(*syscall.Stat_t); ok {
		return int(st.Nlink)
	}
	return 1
}
