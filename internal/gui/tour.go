package gui

import (
	"fmt"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"time"

	"fyne.io/fyne/v2"
)

// Tour walks through every screen on the demo workbook in a real window,
// saving a picture of each into dir, then calls done. It is how the
// README's screenshots are made (scripts/screenshots.sh runs it under
// Xvfb). It must run on its own goroutine.
func (u *UI) Tour(dir string, done func(error)) {
	err := u.tour(dir)
	fyne.Do(func() { done(err) })
}

func (u *UI) tour(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	idle := make(chan struct{}, 1)
	fyne.DoAndWait(func() {
		u.onIdle = func() { idle <- struct{}{} }
		if u.opts.DemoDir == "" {
			u.opts.DemoDir = filepath.Join(os.TempDir(), "slopewise-tour")
			os.RemoveAll(u.opts.DemoDir)
		}
	})
	wait := func() error {
		select {
		case <-idle:
			return nil
		case <-time.After(60 * time.Second):
			return fmt.Errorf("a step took more than a minute")
		}
	}
	shot := func(name string) error {
		time.Sleep(900 * time.Millisecond) // let the window draw
		path := filepath.Join(dir, name+".png")
		// The screen as a person sees it (ImageMagick's import, as under
		// Xvfb); the canvas's own capture where import is missing.
		if imp, err := exec.LookPath("import"); err == nil {
			return exec.Command(imp, "-window", "root", path).Run()
		}
		img := u.win.Canvas().Capture()
		f, err := os.Create(path)
		if err != nil {
			return err
		}
		defer f.Close()
		return png.Encode(f, img)
	}
	if err := shot("1-workbook"); err != nil {
		return err
	}
	fyne.Do(u.openDemo)
	if err := wait(); err != nil {
		return err
	}
	if err := shot("2-rows"); err != nil {
		return err
	}
	// The roles as the window proposes them, no cluster chosen: the
	// check warns that every row of a site has the same region.
	fyne.DoAndWait(u.forward)
	if err := shot("3-roles-grouping"); err != nil {
		return err
	}
	fyne.DoAndWait(func() {
		r := u.rolesScreen
		r.moderator.SetSelected("region")
		r.cluster.SetSelected("site")
		r.controls.SetSelected([]string{"age", "baseline_score"})
	})
	if err := shot("3-roles"); err != nil {
		return err
	}
	fyne.DoAndWait(func() {
		u.forward()
		u.optionsScreen.randomized.SetChecked(true)
		u.optionsScreen.planned.SetSelected(u.optionsScreen.planned.Options)
	})
	if err := shot("4-judging"); err != nil {
		return err
	}
	fyne.Do(u.forward)
	if err := wait(); err != nil {
		return err
	}
	if err := shot("5-findings"); err != nil {
		return err
	}
	fyne.DoAndWait(u.showAbout)
	return shot("6-about")
}
