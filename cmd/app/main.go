// Command slopewise is the Slopewise desktop program and its headless
// commands (analyze, demo).
package main

import (
	"context"
	"os"
	"os/signal"
)

// version is set at build time with -ldflags "-X main.version=…".
var version = "0.1.0-dev"

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	code := cli(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}
