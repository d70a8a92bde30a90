//go:build windows

package save

// Temporary folders cleaned up under Wine (packaging/wine-tests.sh).
import (
	_ "slopewise/internal/underwine"
)
