//go:build !linux && !windows

package save

// exchange is not offered here: the save renames, after checking the
// file just before (the window between the check and the rename remains;
// DEVELOPERS.md).
func exchange(a, b string) error { return errNoExchange }

const exchangeKeepsIdentity = true
