package main

import (
	"os"
	"runtime"
)

// noDesktop says, in one line, why the window cannot open here, or ""
// when it can try: on Linux and the BSDs a window needs an X11 or
// Wayland session (the DISPLAY or WAYLAND_DISPLAY variable, which GLFW
// reads), and without one GLFW panics with a trace of every goroutine.
// Windows and macOS always have a desktop when a user runs the program.
func noDesktop() string {
	switch runtime.GOOS {
	case "windows", "darwin":
		return ""
	}
	if os.Getenv("DISPLAY") != "" || os.Getenv("WAYLAND_DISPLAY") != "" {
		return ""
	}
	return `slopewise: the window needs a desktop session (no DISPLAY or WAYLAND_DISPLAY is set); without one, use the headless commands: "slopewise analyze FILE --outcome COL --treatment COL --moderator COL", "slopewise screen", "slopewise demo" ("slopewise help" lists them)`
}
