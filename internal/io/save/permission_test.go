//go:build unix

package save

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// asNobodyEnv marks the copy of the test binary that runs as an ordinary
// user: file permissions do not stop root, and CI runs as root.
const asNobodyEnv = "SLOPEWISE_TEST_AS_NOBODY"

// nobodyID is the unprivileged "nobody" user and group on Debian (common
// practice: uid and gid 65534).
const nobodyID = 65534

// runAsNobody re-runs the named test in a copy of the test binary as the
// unprivileged user, and reports whether the caller should stop here.
func runAsNobody(t *testing.T) bool {
	t.Helper()
	if os.Geteuid() != 0 || os.Getenv(asNobodyEnv) != "" {
		return false
	}
	dir, err := os.MkdirTemp("", "slopewise-nobody-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	if err := os.Chmod(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "workbook.test")
	copyFile(t, os.Args[0], bin, 0o755)
	cmd := exec.Command(bin, "-test.run", "^"+t.Name()+"$", "-test.v")
	cmd.Env = append(os.Environ(), asNobodyEnv+"=1", "TMPDIR="+os.TempDir())
	cmd.Dir = dir
	cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: nobodyID, Gid: nobodyID}}
	out, err := cmd.CombinedOutput()
	if err != nil || !strings.Contains(string(out), "--- PASS: "+t.Name()+"/") {
		t.Fatalf("as an ordinary user: %v\n%s", err, out)
	}
	return true
}

func copyFile(t *testing.T, src, dst string, mode os.FileMode) {
	t.Helper()
	in, err := os.Open(src)
	if err != nil {
		t.Fatal(err)
	}
	defer in.Close()
	out, err := os.OpenFile(dst, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, mode)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := io.Copy(out, in); err != nil {
		t.Fatal(err)
	}
	if err := out.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestPermissionRefusals covers the bad inputs that need file
// permissions: a file that may not be read, a folder that may not be
// written to, and a workbook that cannot be replaced.
func TestPermissionRefusals(t *testing.T) {
	if runAsNobody(t) {
		return
	}
	if os.Geteuid() == 0 {
		t.Fatal("still root: permissions cannot be tested")
	}
	dir, err := os.MkdirTemp("", "slopewise-perm-")
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
			os.Chmod(p, 0o755)
			return nil
		})
		os.RemoveAll(dir)
	}()

	t.Run("no read permission", func(t *testing.T) {
		p := iotest.SimpleBook().Write(t, dir, "private.xlsx")
		if err := os.Chmod(p, 0); err != nil {
			t.Fatal(err)
		}
		_, err := Read(context.Background(), p, table.Options{})
		want := fmt.Sprintf("%q: %s", p, table.ErrNoReadAccess)
		if !errors.Is(err, table.ErrNoReadAccess) || err.Error() != want {
			t.Errorf("got %v\nwant %s", err, want)
		}
	})
	t.Run("folder without write permission", func(t *testing.T) {
		folder := filepath.Join(dir, "readonly")
		if err := os.Mkdir(folder, 0o755); err != nil {
			t.Fatal(err)
		}
		p := iotest.SimpleBook().Write(t, folder, "book.xlsx")
		before := iotest.HashIfFile(p)
		if err := os.Chmod(folder, 0o555); err != nil {
			t.Fatal(err)
		}
		_, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
		want := fmt.Sprintf("%q: %s", folder, table.ErrFolderReadOnly)
		if !errors.Is(err, table.ErrFolderReadOnly) || err.Error() != want {
			t.Errorf("got %v\nwant %s", err, want)
		}
		if iotest.HashIfFile(p) != before {
			t.Error("the workbook's bytes changed")
		}
		// The copy path always exists.
		w, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{CopyTo: filepath.Join(dir, "copy.xlsx")})
		if err != nil || w.Path != filepath.Join(dir, "copy.xlsx") {
			t.Errorf("copy elsewhere: %+v %v", w, err)
		}
	})
	t.Run("workbook that may not be read for writing", func(t *testing.T) {
		p := iotest.SimpleBook().Write(t, dir, "sealed.xlsx")
		if err := os.Chmod(p, 0o200); err != nil {
			t.Fatal(err)
		}
		_, err := WriteResults(p, iotest.ResultsGrid(t), WriteOptions{})
		want := fmt.Sprintf("%q: %s", p, table.ErrNoReadAccess)
		if !errors.Is(err, table.ErrNoReadAccess) || err.Error() != want {
			t.Errorf("got %v\nwant %s", err, want)
		}
	})
}

// excelize v2.11.1 source, file.go SaveAs: the file is created with mode
// 0777 (less the umask).
func TestExcelizeSaveAsMode(t *testing.T) {
	old := syscall.Umask(0o022)
	defer syscall.Umask(old)
	p := filepath.Join(t.TempDir(), "new.xlsx")
	f := excelize.NewFile()
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	f.Close()
	info, err := os.Stat(p)
	if err != nil {
		t.Fatal(err)
	}
	if info.Mode().Perm() != 0o755 {
		t.Errorf("SaveAs made mode %v; the writer sets the original's mode itself anyway", info.Mode().Perm())
	}
}
