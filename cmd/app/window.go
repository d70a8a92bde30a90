//go:build !nowindow

package main

import (
	"fmt"
	"os"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/app"

	"slopewise/assets"
	"slopewise/internal/gui"
)

// appID is the application's identity for preferences and packaging.
const appID = "org.slopewise.desktop"

// window opens the desktop program, with a workbook if a path is given.
// SLOPEWISE_TOUR=DIR instead walks through every screen on the demo,
// saves a picture of each into DIR and quits (for the README's pictures).
func window(path string) int {
	if msg := noDesktop(); msg != "" {
		fmt.Fprintln(os.Stderr, msg)
		return exitData
	}
	a := app.NewWithID(appID)
	a.SetIcon(fyne.NewStaticResource("slopewise.png", assets.Icon))
	a.Settings().SetTheme(gui.Theme())
	w := a.NewWindow("Slopewise")
	u := gui.New(a, w, gui.Options{Version: version})
	w.Resize(gui.Size(a))
	// SLOPEWISE_TOUR_SIZE=WxH sets the tour's window size (the
	// screenshots at laptop sizes).
	var tw, th float32
	if _, err := fmt.Sscanf(os.Getenv("SLOPEWISE_TOUR_SIZE"), "%fx%f", &tw, &th); err == nil && tw > 0 && th > 0 {
		w.Resize(fyne.NewSize(tw, th))
	}
	if dir := os.Getenv("SLOPEWISE_TOUR"); dir != "" {
		go u.Tour(dir, func(err error) {
			if err != nil {
				fmt.Fprintln(os.Stderr, "slopewise: tour:", err)
			}
			a.Quit()
		})
	} else if path != "" {
		u.Open(path)
	}
	w.ShowAndRun()
	return 0
}
