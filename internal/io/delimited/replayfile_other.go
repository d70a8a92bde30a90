//go:build !windows

package delimited

import "os"

// createReplayFile makes the replay's temporary file and removes its name
// at once, so that its space comes back when it is closed, even if the
// program is stopped. The name it gives is the one still to remove at
// close, where removing an open file failed.
func createReplayFile() (*os.File, string, error) {
	f, err := os.CreateTemp("", "slopewise-pass-*")
	if err != nil {
		return nil, "", err
	}
	if os.Remove(f.Name()) != nil {
		return f, f.Name(), nil
	}
	return f, "", nil
}
