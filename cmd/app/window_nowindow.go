//go:build nowindow

package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
)

// windowProgram is the program with the window, beside this one. The
// nowindow build is Windows' command-line companion (slopewise.com, a
// console program, so that a terminal waits for it and sees its output
// and exit status); the window lives in the GUI program Slopewise.exe.
const windowProgram = "Slopewise.exe"

// window starts the window program beside this executable, with the
// workbook if a path is given, and returns without waiting for it, as
// double-clicking it would.
func window(path string) int {
	self, err := os.Executable()
	if err != nil {
		fmt.Fprintln(os.Stderr, "slopewise:", err)
		return exitUsage
	}
	gui := filepath.Join(filepath.Dir(self), windowProgram)
	var args []string
	if path != "" {
		args = append(args, path)
	}
	cmd := exec.Command(gui, args...)
	if err := cmd.Start(); err != nil {
		fmt.Fprintf(os.Stderr, "slopewise: this program has no window; %s beside it opens one, but it could not start: %v\n", windowProgram, err)
		return exitUsage
	}
	cmd.Process.Release()
	return exitOK
}
