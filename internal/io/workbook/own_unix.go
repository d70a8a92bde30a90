//go:build unix

package workbook

import (
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
