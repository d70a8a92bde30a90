//go:build linux

package save

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// smallDisk mounts a file system of size bytes (tmpfs) for the test, or
// skips where the test may not mount one (not root, or a container that
// forbids it).
func smallDisk(t *testing.T, size int) string {
	t.Helper()
	if os.Geteuid() != 0 {
		t.Skip("mounting a small file system needs root")
	}
	dir := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", fmt.Sprintf("size=%d", size), "slopewise-full", dir).CombinedOutput(); err != nil {
		t.Skipf("no small file system can be mounted here: %v %s", err, out)
	}
	t.Cleanup(func() { exec.Command("umount", dir).Run() })
	return dir
}

// leaveFree fills the file system at dir with a file "filler" so that
// about free bytes stay available (to the page).
func leaveFree(t *testing.T, dir string, free int64) {
	t.Helper()
	filler := filepath.Join(dir, "filler")
	os.Remove(filler)
	var st syscall.Statfs_t
	if err := syscall.Statfs(dir, &st); err != nil {
		t.Fatal(err)
	}
	avail := int64(st.Bavail) * st.Bsize
	if n := (avail - free) / 4096 * 4096; n > 0 {
		if err := os.WriteFile(filler, make([]byte, n), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// noneOpen fails the test for each file under dir that the process still
// holds open: one would keep the disk from being unmounted, and on Windows
// the file from being removed.
func noneOpen(t *testing.T, dir string) {
	t.Helper()
	fds, _ := os.ReadDir("/proc/self/fd")
	for _, fd := range fds {
		if l, _ := os.Readlink("/proc/self/fd/" + fd.Name()); strings.HasPrefix(l, dir) {
			t.Errorf("left open: %s", l)
		}
	}
}

func folderNames(dir string) string {
	es, _ := os.ReadDir(dir)
	var names []string
	for _, e := range es {
		names = append(names, e.Name())
	}
	sort.Strings(names)
	return strings.Join(names, ", ")
}

// TestFullDisk fills a real (small) disk so that a save runs out of space
// at each of its steps in turn: making the new workbook, finishing it,
// writing the backup; and the same for a CSV's results workbook with its
// data sheet, and for a file written whole (the demo). Each time: the
// cause is the full disk (ErrNoSpace, with the system's reason), the
// original is byte for byte what it was, and nothing else is left in the
// folder. With the space back, the save goes through.
func TestFullDisk(t *testing.T) {
	dir := smallDisk(t, 4<<20)
	orig := iotest.SimpleBook().Bytes(t)
	// How big the new workbook is, measured on a disk with room.
	roomy := t.TempDir()
	probe := filepath.Join(roomy, "book.xlsx")
	if err := os.WriteFile(probe, orig, 0o644); err != nil {
		t.Fatal(err)
	}
	w, err := WriteResults(probe, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	info, err := os.Stat(w.Path)
	if err != nil {
		t.Fatal(err)
	}
	newSize, origSize := info.Size(), int64(len(orig))
	path := filepath.Join(dir, "book.xlsx")
	if err := os.WriteFile(path, orig, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		free int64
	}{
		{"no room at all", 0},
		{"room for part of the new workbook", newSize / 2},
		{"room for the new workbook, not the backup", newSize + origSize/2},
	} {
		t.Run(c.name, func(t *testing.T) {
			leaveFree(t, dir, c.free)
			_, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
			if !errors.Is(err, table.ErrNoSpace) || !errors.Is(err, syscall.ENOSPC) {
				t.Errorf("got %v, want the full disk named", err)
			}
			if iotest.HashIfFile(path) != iotest.SHA(orig) {
				t.Error("the workbook changed")
			}
			noneOpen(t, dir)
			if got := folderNames(dir); got != "book.xlsx, filler" {
				t.Errorf("left in the folder: %s", got)
			}
		})
	}
	t.Run("space back", func(t *testing.T) {
		os.Remove(filepath.Join(dir, "filler"))
		w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if iotest.HashIfFile(w.Backup) != iotest.SHA(orig) {
			t.Error("the backup is not the original")
		}
	})
}

// TestFullDiskCSV: a CSV's results workbook, whose data sheet copies the
// file's records, and a file written whole, on a disk that fills while
// they are written: the cause is the full disk (not "did not match"), and
// no partial file is left.
func TestFullDiskCSV(t *testing.T) {
	dir := smallDisk(t, 4<<20)
	var b strings.Builder
	b.WriteString("id,score,group\n")
	for i := 0; i < 40000; i++ {
		fmt.Fprintf(&b, "%d,%d.%03d,g%d\n", i, i%97, i%1000, i%7)
	}
	csv := filepath.Join(dir, "survey.csv")
	if err := os.WriteFile(csv, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	// The CSV is about 0.6 MB: its copy into a sheet does not fit in
	// what is left beside it.
	leaveFree(t, dir, 64<<10)
	_, err := WriteResults(csv, iotest.ResultsGrid(t), WriteOptions{CopyData: CopyDataAlways})
	if !errors.Is(err, table.ErrNoSpace) {
		t.Errorf("the CSV's results: got %v, want the full disk named", err)
	}
	whole := filepath.Join(dir, "demo.xlsx")
	data := make([]byte, 256<<10)
	copy(data, iotest.SimpleBook().Bytes(t))
	if err := WriteWhole(whole, data, 0o644); !errors.Is(err, table.ErrNoSpace) {
		t.Errorf("a file written whole: got %v, want the full disk named", err)
	}
	noneOpen(t, dir)
	if got := folderNames(dir); got != "filler, survey.csv" {
		t.Errorf("left in the folder: %s", got)
	}
}
