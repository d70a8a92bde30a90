//go:build windows

package save

import (
	"errors"
	"os"
	"strconv"
	"syscall"
	"unsafe"

	"golang.org/x/sys/windows"
)

var procReplaceFileW = windows.NewLazySystemDLL("kernel32.dll").NewProc("ReplaceFileW")

// ReplaceFileW's flags and errors (Microsoft's documentation of
// ReplaceFileW and winerror.h): REPLACEFILE_IGNORE_MERGE_ERRORS 0x2,
// REPLACEFILE_IGNORE_ACL_ERRORS 0x4; ERROR_UNABLE_TO_MOVE_REPLACEMENT_2
// 1177 (the replaced file is left under the backup name only);
// ERROR_INVALID_FUNCTION 1, ERROR_NOT_SUPPORTED 50 and
// ERROR_NOT_SAME_DEVICE 17 where the file system cannot.
const (
	replaceFlags          = 0x2 | 0x4
	errMoveReplacement2   = syscall.Errno(1177)
	errInvalidFunction    = syscall.Errno(1)
	errNotSupported       = syscall.Errno(50)
	errNotSameDevice      = syscall.Errno(17)
	exchangeKeepsIdentity = false
)

// exchange swaps the files at a and b with ReplaceFileW: b's file moves
// to a spare name beside a (its backup name) as a becomes b, then the
// spare name becomes a. The file moved out of b is the one that was
// there at that instant, so a save by another program just before it is
// found by the caller's check and swapped back, as on Linux. Windows
// moves b's attributes, security and creation time to the new file
// ("merges" them; errors there ignored), which is what a spreadsheet
// program's save does too. errNoExchange where the system or the file
// system cannot.
func exchange(a, b string) error {
	if a == "" || b == "" {
		if procReplaceFileW.Find() != nil {
			return errNoExchange
		}
		return errors.New("no file named")
	}
	if procReplaceFileW.Find() != nil {
		return errNoExchange
	}
	spare := ""
	for k := 1; ; k++ {
		spare = a + "-" + strconv.Itoa(k) // a debris name (debrisName) if left
		if _, err := os.Lstat(spare); os.IsNotExist(err) {
			break
		}
	}
	bp, err := syscall.UTF16PtrFromString(b)
	if err != nil {
		return err
	}
	ap, err := syscall.UTF16PtrFromString(a)
	if err != nil {
		return err
	}
	sp, err := syscall.UTF16PtrFromString(spare)
	if err != nil {
		return err
	}
	r, _, e := procReplaceFileW.Call(uintptr(unsafe.Pointer(bp)), uintptr(unsafe.Pointer(ap)), uintptr(unsafe.Pointer(sp)), replaceFlags, 0, 0)
	if r == 0 {
		switch e {
		case errInvalidFunction, errNotSupported, errNotSameDevice:
			return errNoExchange
		case errMoveReplacement2:
			// b is now only at the spare name: put it back.
			if err := os.Rename(spare, b); err != nil {
				return err
			}
		}
		return e
	}
	return os.Rename(spare, a)
}
