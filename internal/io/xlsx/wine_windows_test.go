//go:build windows

package xlsx

// Temporary folders cleaned up under Wine (packaging/wine-tests.sh).
import _ "slopewise/internal/underwine"
