//go:build windows

package delimited

// Temporary folders cleaned up under Wine (packaging/wine-tests.sh).
import _ "slopewise/internal/underwine"
