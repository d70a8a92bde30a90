//go:build windows

package underwine

import (
	"os"
	_ "unsafe" // go:linkname
)

//go:linkname deleteatFallback internal/syscall/windows.TestDeleteatFallback
var deleteatFallback bool

func init() {
	if os.Getenv("SLOPEWISE_UNDER_WINE") != "" {
		deleteatFallback = true
	}
}
