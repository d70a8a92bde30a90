//go:build !linux && !windows

package save

// Exchange is not offered here: the save renames, after checking the
// file just before (the window between the check and the rename remains;
// DEVELOPERS.md).
func Exchange(a, b string) error { return ErrNoExchange }

const exchangeKeepsIdentity = true
