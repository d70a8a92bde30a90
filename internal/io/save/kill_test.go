//go:build linux

package save

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// killSteps are the moments of a save at which TestKilledSave kills it:
// the new workbook built and checked, the backup complete under its
// temporary name, the backup named, the new workbook swapped in.
var killSteps = []string{"built", "backup written", "backup named", "exchanged"}

// TestKilledSave kills a save (a child process, SIGKILL) at each step in
// turn and checks what a person would find: the workbook is the original
// or the whole new one, never neither; a file named as a backup is the
// original byte for byte; and after the leftovers have aged a day, the
// next save removes every temporary file and writes the results.
func TestKilledSave(t *testing.T) {
	if step := os.Getenv("SLOPEWISE_KILL_STEP"); step != "" {
		killChild(t, step, os.Getenv("SLOPEWISE_KILL_FILE"))
		return
	}
	for _, step := range killSteps {
		t.Run(step, func(t *testing.T) {
			dir := t.TempDir()
			path := iotest.SimpleBook().Write(t, dir, "book.xlsx")
			orig, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			marker := filepath.Join(t.TempDir(), "at-step")
			cmd := exec.Command(os.Args[0], "-test.run=^TestKilledSave$")
			cmd.Env = append(os.Environ(), "SLOPEWISE_KILL_STEP="+step, "SLOPEWISE_KILL_FILE="+path, "SLOPEWISE_KILL_MARKER="+marker)
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			deadline := time.Now().Add(30 * time.Second)
			for !fileExists(marker) {
				if time.Now().After(deadline) {
					cmd.Process.Kill()
					cmd.Wait()
					t.Fatalf("the save never reached %q", step)
				}
				time.Sleep(10 * time.Millisecond)
			}
			cmd.Process.Signal(syscall.SIGKILL)
			cmd.Wait()

			now, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("the workbook is gone: %v", err)
			}
			if !bytes.Equal(now, orig) {
				sheets, err := xlsx.Sheets(path)
				if err != nil || len(sheets) != 2 {
					t.Errorf("the workbook is neither the original nor the whole new one: %v %v", sheets, err)
				}
			}
			entries, _ := os.ReadDir(dir)
			for _, e := range entries {
				if strings.Contains(e.Name(), "(before Slopewise") {
					if b, err := os.ReadFile(filepath.Join(dir, e.Name())); err != nil || !bytes.Equal(b, orig) {
						t.Errorf("%s looks like a backup but is not the original", e.Name())
					}
				}
				if e.Name() != "book.xlsx" {
					// Age every leftover a day, as if found tomorrow.
					old := time.Now().Add(-48 * time.Hour)
					os.Chtimes(filepath.Join(dir, e.Name()), old, old)
				}
			}
			tab, err := Read(context.Background(), path, table.Options{Sheet: "Data"})
			if err != nil {
				t.Fatal(err)
			}
			if _, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Expect: tab.Source}); err != nil {
				t.Fatalf("the next save: %v", err)
			}
			entries, _ = os.ReadDir(dir)
			for _, e := range entries {
				if strings.HasPrefix(e.Name(), ".") {
					t.Errorf("left after the next save: %s", e.Name())
				}
			}
		})
	}
}

// killChild saves into file and, at the step named, says so through the
// marker file and waits to be killed.
func killChild(t *testing.T, step, file string) {
	stop := func(string) {
		os.WriteFile(os.Getenv("SLOPEWISE_KILL_MARKER"), nil, 0o644)
		time.Sleep(time.Minute)
	}
	switch step {
	case "built":
		beforeReplace = stop
	case "backup written":
		beforeBackupNamed = stop
	case "backup named":
		beforeExchange = stop
	case "exchanged":
		afterExchange = stop
	}
	WriteResults(file, iotest.ResultsGrid(t), WriteOptions{})
	t.Fatal("the save ended without being killed")
}
