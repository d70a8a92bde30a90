//go:build windows

package delimited

import (
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"syscall"
)

// Flags of CreateFileW not in package syscall (Microsoft's documentation
// of CreateFileW, dwFlagsAndAttributes).
const (
	fileAttributeTemporary = 0x00000100
	fileFlagDeleteOnClose  = 0x04000000
)

// createReplayFile makes the replay's temporary file, which Windows
// deletes when it is closed or when the program ends, however it ends (an
// open file cannot be removed there, so removing it at once is no help).
// The name it gives is "" since nothing is left to remove.
func createReplayFile() (*os.File, string, error) {
	for range 100 {
		name := filepath.Join(os.TempDir(), "slopewise-pass-"+strconv.FormatUint(rand.Uint64(), 36))
		p, err := syscall.UTF16PtrFromString(name)
		if err != nil {
			return nil, "", err
		}
		h, err := syscall.CreateFile(p, syscall.GENERIC_READ|syscall.GENERIC_WRITE, 0, nil, syscall.CREATE_NEW,
			fileAttributeTemporary|fileFlagDeleteOnClose, 0)
		if errors.Is(err, syscall.ERROR_FILE_EXISTS) {
			continue
		}
		if err != nil {
			return nil, "", err
		}
		return os.NewFile(uintptr(h), name), "", nil
	}
	return nil, "", errors.New("no free name for a temporary file")
}
