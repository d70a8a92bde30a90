// Command slopewise is the Slopewise desktop program and its headless
// commands. For now it only reports its version: the engine, the workbook
// reader and the report arrive first, the window and the commands after.
package main

import (
	"fmt"
	"os"
)

// version is set at build time with -ldflags "-X main.version=…".
var version = "0.1.0-dev"

func main() {
	if len(os.Args) > 1 && (os.Args[1] == "version" || os.Args[1] == "--version") {
		fmt.Println("slopewise", version)
		return
	}
	fmt.Fprintln(os.Stderr, "slopewise", version, "— the desktop window and the analyze command are not built yet.")
	os.Exit(2)
}
