//go:build linux

package save

import "golang.org/x/sys/unix"

// exchangeKeepsIdentity: the file swapped out is the very file that was
// at the target (same device and inode).
const exchangeKeepsIdentity = true

// exchange swaps the files at a and b in one step (renameat2 with
// RENAME_EXCHANGE, Linux 3.15 and later, on the file systems that offer
// it); errNoExchange where the system or the file system cannot.
func exchange(a, b string) error {
	err := unix.Renameat2(unix.AT_FDCWD, a, unix.AT_FDCWD, b, unix.RENAME_EXCHANGE)
	switch err {
	case nil:
		return nil
	case unix.ENOSYS, unix.EINVAL, unix.ENOTSUP:
		return errNoExchange
	}
	return err
}
