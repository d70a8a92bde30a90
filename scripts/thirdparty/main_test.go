package main

import (
	"bytes"
	"os"
	"strings"
	"testing"
)

const committed = "../../THIRD_PARTY_LICENSES"

// TestEveryLinkedModuleIsCovered checks that every module linked into the
// program, on every platform, has its section, with a licence text, in
// the committed THIRD_PARTY_LICENSES.
func TestEveryLinkedModuleIsCovered(t *testing.T) {
	mods, std, err := Linked("../../cmd/app")
	if err != nil {
		t.Fatal(err)
	}
	if !std || len(mods) < 10 {
		t.Fatalf("go list found %d modules (standard library: %v); expected the GUI's dozens", len(mods), std)
	}
	b, err := os.ReadFile(committed)
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	rule := strings.Repeat("=", 78)
	for _, m := range mods {
		heading := rule + "\n" + m.Path + " " + m.Version + "\n" + rule + "\n\n--- "
		if !strings.Contains(text, heading) {
			t.Errorf("%s %s is linked in but has no licence section in THIRD_PARTY_LICENSES; run go run ./scripts/thirdparty -o THIRD_PARTY_LICENSES", m.Path, m.Version)
		}
	}
}

// TestCommittedFileIsCurrent checks that the committed file is exactly
// what the generator writes now: no stale module left in, no text edited.
func TestCommittedFileIsCurrent(t *testing.T) {
	want, err := Generate("../../cmd/app")
	if err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(committed)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Error("THIRD_PARTY_LICENSES is out of date; run go run ./scripts/thirdparty -o THIRD_PARTY_LICENSES")
	}
}

func TestIsLicenceName(t *testing.T) {
	for name, want := range map[string]bool{
		"LICENSE": true, "LICENCE.md": true, "COPYING.txt": true, "license-SIL": true,
		"licenses": true, "NOTICE": true, "PATENTS": true, "README.md": false, "licensing.go": false,
		"main.go": false,
	} {
		if got := isLicenceName(name); got != want {
			t.Errorf("isLicenceName(%q) = %v, want %v", name, got, want)
		}
	}
}
