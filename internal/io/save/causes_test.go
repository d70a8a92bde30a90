//go:build unix

package save

import (
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// TestReadOnlyWorkbookNotReplaced: a workbook of mode 0444 is read-only,
// also for an administrator, as spreadsheet programs treat it: it is not
// replaced, nothing is left beside it, and a copy can still be written.
func TestReadOnlyWorkbookNotReplaced(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "locked.xlsx")
	if err := os.Chmod(p, 0o444); err != nil {
		t.Fatal(err)
	}
	before := iotest.HashIfFile(p)
	_, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
	if !errors.Is(err, table.ErrReadOnlyFile) || !strings.Contains(err.Error(), "save the results to a copy") {
		t.Fatalf("got %v", err)
	}
	if iotest.HashIfFile(p) != before {
		t.Error("the workbook changed")
	}
	if names, _ := os.ReadDir(dir); len(names) != 1 {
		t.Errorf("files beside it: %v", names)
	}
	if _, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{CopyTo: filepath.Join(dir, "copy.xlsx")}); err != nil {
		t.Errorf("copy: %v", err)
	}
}

// TestNameTooLong: a workbook whose name leaves no room for the temporary
// name of the save (255 bytes a name on Linux file systems, common
// practice) gets the message for a name too long, not "cannot create
// files in this folder".
func TestNameTooLong(t *testing.T) {
	dir := t.TempDir()
	name := strings.Repeat("n", 240) + ".xlsx"
	p := iotest.SimpleBook().Write(t, dir, name)
	before := iotest.HashIfFile(p)
	_, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
	if !errors.Is(err, table.ErrNameTooLong) {
		t.Fatalf("got %v", err)
	}
	if iotest.HashIfFile(p) != before {
		t.Error("the workbook changed")
	}
	if names, _ := os.ReadDir(dir); len(names) != 1 {
		t.Errorf("files beside it: %v", names)
	}
}

// TestWriteErrorCauses: the system's reasons map to their own messages.
func TestWriteErrorCauses(t *testing.T) {
	for _, c := range []struct {
		errno syscall.Errno
		cause error
	}{
		{syscall.ENOSPC, table.ErrNoSpace}, {syscall.ENAMETOOLONG, table.ErrNameTooLong},
		{syscall.EROFS, table.ErrDiskReadOnly}, {syscall.EACCES, table.ErrFolderReadOnly},
	} {
		err := writeError("x", "", &fs.PathError{Op: "open", Path: "x", Err: c.errno})
		if !errors.Is(err, c.cause) || !errors.Is(err, c.errno) {
			t.Errorf("%v: got %v", c.errno, err)
		}
	}
}

// TestWorkbookNamedCSV: a workbook named .csv is read as a workbook and
// its results go into "<name> results.xlsx" beside it; the file itself
// is not changed.
func TestWorkbookNamedCSV(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "export.csv")
	before := iotest.HashIfFile(p)
	w, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if w.Path != filepath.Join(dir, "export results.xlsx") || iotest.HashIfFile(p) != before {
		t.Errorf("written to %s; the .csv must stay as it was", w.Path)
	}
}

// TestDebrisCleaned: a save removes the leftovers of stopped saves from
// its folder — files named as Slopewise names its temporary files, older
// than a day, zip archives — and nothing else.
func TestDebrisCleaned(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "book.xlsx")
	zipBytes, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	old := time.Now().Add(-48 * time.Hour)
	make := func(name string, body []byte, when time.Time) string {
		q := filepath.Join(dir, name)
		if err := os.WriteFile(q, body, 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.Chtimes(q, when, when); err != nil {
			t.Fatal(err)
		}
		return q
	}
	gone := []string{
		make(".book.xlsx.slopewise-123.tmp", zipBytes[:100], old),
		make(".book.xlsx.slopewise-backup-77.tmp", zipBytes, old),
		make(".other.xlsx.slopewise-9.tmp-42", nil, old),
	}
	kept := []string{
		make(".book.xlsx.slopewise-124.tmp", zipBytes, time.Now()),          // another run's, young
		make(".book.xlsx.slopewise-125.tmp", []byte("not a workbook"), old), // not ours by content
		make("book.xlsx.slopewise-126.tmp", zipBytes, old),                  // not hidden: not our name
		make("notes.txt", []byte("x"), old),
	}
	w, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range gone {
		if fileExists(q) {
			t.Errorf("%s was not removed", filepath.Base(q))
		}
	}
	for _, q := range kept {
		if !fileExists(q) {
			t.Errorf("%s was removed", filepath.Base(q))
		}
	}
	if len(w.Cleaned) != len(gone) {
		t.Errorf("cleaned %v", w.Cleaned)
	}
}

// TestChangedAfterRead: the workbook is replaced by another program's save
// after its data were read (during the fit): the results are not written
// into the new version, which stays as it is.
func TestChangedAfterRead(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "live.xlsx")
	tab, err := Read(context.Background(), p, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	saved := iotest.VisitsBook().Bytes(t)
	if err := os.WriteFile(p+".new", saved, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(p+".new", p); err != nil { // as spreadsheet programs save
		t.Fatal(err)
	}
	_, err = WriteResults(p, iotest.ResultsGrid(t), WriteOptions{Expect: tab.Source})
	if !errors.Is(err, table.ErrChangedSinceRead) || !strings.Contains(err.Error(), "run the analysis again") {
		t.Fatalf("got %v", err)
	}
	if iotest.FileHash(t, p) != iotest.SHA(saved) {
		t.Error("the new version changed")
	}
	if names, _ := os.ReadDir(dir); len(names) != 1 {
		t.Errorf("left in the folder: %v", names)
	}
	// Unchanged since reading: written.
	tab, err = Read(context.Background(), p, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{Expect: tab.Source}); err != nil {
		t.Errorf("unchanged since read: %v", err)
	}
}

// TestTwoSavesAtOnce: two saves of results made from the same reading of
// a workbook run at once; they take turns through the lock, the first is
// written and the second, finding a newer version than it read, is
// refused. One results sheet, one backup, no lock or temporary file left.
func TestTwoSavesAtOnce(t *testing.T) {
	for trial := 0; trial < 5; trial++ {
		dir := t.TempDir()
		p := iotest.SimpleBook().Write(t, dir, "shared.xlsx")
		tab, err := Read(context.Background(), p, table.Options{})
		if err != nil {
			t.Fatal(err)
		}
		errs := make(chan error, 2)
		for range 2 {
			go func() {
				_, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{Expect: tab.Source})
				errs <- err
			}()
		}
		var ok, changed int
		for range 2 {
			switch err := <-errs; {
			case err == nil:
				ok++
			case errors.Is(err, table.ErrChangedSinceRead):
				changed++
			default:
				t.Errorf("unexpected: %v", err)
			}
		}
		if ok != 1 || changed != 1 {
			t.Fatalf("trial %d: %d written, %d refused as changed", trial, ok, changed)
		}
		sheets, err := xlsx.Sheets(p)
		if err != nil || len(sheets) != 2 {
			t.Errorf("sheets %v (%v)", sheets, err)
		}
		names, _ := os.ReadDir(dir)
		if len(names) != 2 { // the workbook and one backup
			t.Errorf("left in the folder: %v", names)
		}
	}
}

// TestStaleLockTakenOver: a lock left by a run that has ended (its
// process no longer exists) does not stop a save, and is gone after it.
func TestStaleLockTakenOver(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "book.xlsx")
	lock := runLockName(p)
	if err := os.WriteFile(lock, []byte("2147483646 1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	if fileExists(lock) {
		t.Error("the lock is still there")
	}
}

// TestHardLinkSaid: a workbook with a second name (a hard link) is
// written as a new file, and the save says that the other name keeps the
// old content.
func TestHardLinkSaid(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "book.xlsx")
	other := filepath.Join(dir, "same book.xlsx")
	if err := os.Link(p, other); err != nil {
		t.Skip("no hard links here:", err)
	}
	before := iotest.HashIfFile(other)
	w, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(w.Notes) != 1 || !strings.Contains(w.Notes[0], "1 other name(s) (hard links)") {
		t.Errorf("notes %q", w.Notes)
	}
	if iotest.HashIfFile(other) != before {
		t.Error("the other name changed")
	}
}

// TestLockNamedWorkbook: a workbook whose own name starts with "~$" is
// not taken for its own lock file.
func TestLockNamedWorkbook(t *testing.T) {
	dir := t.TempDir()
	p := iotest.SimpleBook().Write(t, dir, "~$data.xlsx")
	if _, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{}); err != nil {
		t.Errorf("got %v", err)
	}
}

// TestReplaceOnlyOurResults: allowed to replace earlier results, a save
// still refuses to replace a file of that name that holds no results of
// Slopewise's, and replaces one that does, keeping a backup.
func TestReplaceOnlyOurResults(t *testing.T) {
	dir := t.TempDir()
	src := iotest.WriteFile(t, dir, "scores.csv", []byte("id,score,group\n1,2,a\n2,3,b\n"))
	target := ResultsPathFor(src)
	iotest.SimpleBook().Write(t, dir, filepath.Base(target)) // the user's own workbook of that name
	before := iotest.HashIfFile(target)
	_, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{Replace: true})
	if !errors.Is(err, table.ErrTargetExists) || !strings.Contains(err.Error(), "not a workbook of Slopewise's results") {
		t.Fatalf("got %v", err)
	}
	if iotest.HashIfFile(target) != before {
		t.Error("the user's workbook changed")
	}
	os.Remove(target)
	if _, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{Replace: true})
	if err != nil || w.Backup == "" {
		t.Errorf("replacing earlier results: %+v %v", w, err)
	}
}

// TestWriteWhole: a file written whole (the demo workbook) appears only
// complete, never replaces an existing file, and leaves nothing else.
func TestWriteWhole(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "demo.xlsx")
	data := iotest.SimpleBook().Bytes(t)
	if err := WriteWhole(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	if iotest.HashIfFile(p) != iotest.SHA(data) {
		t.Error("the file is not the data")
	}
	if err := WriteWhole(p, []byte("other"), 0o644); !errors.Is(err, table.ErrTargetExists) {
		t.Errorf("an existing file: %v", err)
	}
	if names, _ := os.ReadDir(dir); len(names) != 1 {
		t.Errorf("left in the folder: %v", names)
	}
	long := filepath.Join(dir, strings.Repeat("d", 250)+".xlsx")
	if err := WriteWhole(long, data, 0o644); !errors.Is(err, table.ErrNameTooLong) {
		t.Errorf("a name too long: %v", err)
	}
}

// TestRunLockOneHolder: eight saves take the lock at once, a lock file of
// a run that has ended being there: never more than one holds it.
func TestRunLockOneHolder(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "book.xlsx")
	for trial := 0; trial < 3; trial++ {
		os.WriteFile(runLockName(p), []byte("999999 1\n"), 0o644)
		var holders, most int32
		var mu sync.Mutex
		var wg sync.WaitGroup
		for range 8 {
			wg.Add(1)
			go func() {
				defer wg.Done()
				unlock, err := takeRunLock(p)
				if err != nil {
					t.Error(err)
					return
				}
				mu.Lock()
				holders++
				most = max(most, holders)
				mu.Unlock()
				time.Sleep(2 * time.Millisecond)
				mu.Lock()
				holders--
				mu.Unlock()
				unlock()
			}()
		}
		wg.Wait()
		if most != 1 {
			t.Fatalf("trial %d: %d holders at once", trial, most)
		}
	}
}
