//go:build windows

package workbook

// Temporary folders cleaned up under Wine (packaging/wine-tests.sh).
import _ "slopewise/internal/underwine"
