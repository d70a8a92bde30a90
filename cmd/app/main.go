// Command slopewise is the Slopewise desktop program and its headless
// commands (analyze, demo). With no command it opens the window, with the
// workbook given as its argument if there is one ("Open with").
package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"runtime/pprof"
)

// version is set at build time with -ldflags "-X main.version=…".
var version = "0.1.0-dev"

func main() {
	args := os.Args[1:]
	if len(args) == 0 || opensFile(args) {
		path := ""
		if len(args) > 0 {
			path = args[0]
		}
		os.Exit(window(path))
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	stopProfile := startProfile()
	code := cli(ctx, args, os.Stdout, os.Stderr)
	stopProfile()
	stop()
	os.Exit(code)
}

// opensFile tells "slopewise FILE" (open the window with a workbook, as
// "Open with" does) from a command: one argument that is not a command
// name and is an existing file, or looks like a file name.
func opensFile(args []string) bool {
	if len(args) != 1 {
		return false
	}
	switch args[0] {
	case "analyze", "demo", "help", "version", "--help", "-h", "-help", "--version":
		return false
	}
	if _, err := os.Stat(args[0]); err == nil {
		return true
	}
	return filepath.Ext(args[0]) != ""
}

// startProfile writes a CPU profile of a headless command to the file
// named by SLOPEWISE_CPUPROFILE, for developers (DEVELOPERS.md,
// "Habits"); it returns the function that ends it.
func startProfile() func() {
	path := os.Getenv("SLOPEWISE_CPUPROFILE")
	if path == "" {
		return func() {}
	}
	f, err := os.Create(path)
	if err == nil {
		err = pprof.StartCPUProfile(f)
	}
	if err != nil {
		fmt.Fprintf(os.Stderr, "slopewise: no CPU profile: %v\n", err)
		return func() {}
	}
	return func() {
		pprof.StopCPUProfile()
		f.Close()
	}
}
