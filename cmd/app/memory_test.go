package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestMemoryGuard runs a child that allocates past a small ceiling: it
// ends with exit status 1 and one plain line, not the runtime's abort.
func TestMemoryGuard(t *testing.T) {
	if os.Getenv("SLOPEWISE_GUARD_CHILD") != "" {
		guardBase = 64 << 20
		defer guardMemory(os.Getenv("SLOPEWISE_GUARD_CHILD"))()
		var keep [][]byte
		for i := 0; i < 400; i++ {
			b := make([]byte, 1<<20)
			for j := range b {
				b[j] = byte(j)
			}
			keep = append(keep, b)
		}
		t.Fatalf("the guard let %d MiB through", len(keep))
	}
	file := filepath.Join(t.TempDir(), "small.csv")
	if err := os.WriteFile(file, []byte("a,b\n1,2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestMemoryGuard$")
	cmd.Env = append(os.Environ(), "SLOPEWISE_GUARD_CHILD="+file)
	out, err := cmd.CombinedOutput()
	ee, ok := err.(*exec.ExitError)
	if !ok || ee.ExitCode() != exitData {
		t.Fatalf("exit %v, want %d:\n%s", err, exitData, out)
	}
	if !strings.Contains(string(out), "took more than") || strings.Contains(string(out), "goroutine ") {
		t.Errorf("message:\n%s", out)
	}
}
