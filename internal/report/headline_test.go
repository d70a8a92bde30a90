package report

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestHeadlineGolden compares the headline of every note situation, and of
// every screen, with the reviewed text in testdata/report/headlines/.
// Run with -update to rewrite them after reading the differences.
func TestHeadlineGolden(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "report", "headlines")
	if *update {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	for name, s := range noteScenarios {
		t.Run(name, func(t *testing.T) {
			run, res := s.fit(t)
			compareGolden(t, filepath.Join(dir, name+".txt"), headlineGolden(Headline(run, res)))
		})
	}
	for name, s := range screenScenarios {
		t.Run(name, func(t *testing.T) {
			sr, sc := s.fit(t)
			compareGolden(t, filepath.Join(dir, name+".txt"), headlineGolden(ScreenHeadline(sr, sc)))
		})
	}
}

func headlineGolden(lines []string) string {
	var b strings.Builder
	for _, l := range lines {
		fmt.Fprintf(&b, "- %s\n", wrap(l, 76))
	}
	return b.String()
}

// TestHeadlineWordingRules checks the rules of METHODS §9 on every
// headline: two or three sentences; no banned words; "effect" only for a
// randomised treatment; every estimate with its interval; an exploratory
// moderator among several with its adjusted p.
func TestHeadlineWordingRules(t *testing.T) {
	for name, s := range noteScenarios {
		run, res := s.fit(t)
		lines := Headline(run, res)
		text := strings.Join(lines, " ")
		checkBanned(t, name, text, run.Randomized)
		if len(lines) < 2 || len(lines) > 3 {
			t.Errorf("%s: %d sentences in the headline", name, len(lines))
		}
		if !strings.Contains(lines[0], "CI") {
			t.Errorf("%s: the effects without their interval: %s", name, lines[0])
		}
		if run.tried() > 1 && !strings.Contains(text, "after allowing for") && !strings.Contains(text, "adjusted") {
			t.Errorf("%s: an exploratory moderator among several without its adjusted p:\n%s", name, text)
		}
	}
	for name, s := range screenScenarios {
		sr, sc := s.fit(t)
		text := strings.Join(ScreenHeadline(sr, sc), " ")
		checkBanned(t, name, text, sr.Base.Randomized)
		if !strings.Contains(text, "adjusted p") {
			t.Errorf("%s: a screen's headline without adjusted p-values:\n%s", name, text)
		}
	}
}

func checkBanned(t *testing.T, name, text string, randomized bool) {
	t.Helper()
	// The caution of a treatment not randomised says "not effects".
	lower := strings.ReplaceAll(strings.ToLower(text), "not effects", "")
	for _, banned := range []string{"no difference", "significant", "no effect", "proves", "caused by"} {
		if strings.Contains(lower, banned) {
			t.Errorf("%s: the headline says %q:\n%s", name, banned, text)
		}
	}
	if !randomized && strings.Contains(lower, " effect") {
		t.Errorf("%s: 'effect' in a headline on a treatment not randomly assigned:\n%s", name, text)
	}
}

// TestNotePartsKeepTheNote checks that the note's parts hold exactly the
// note's sentences, none lost or repeated, under the plain headings.
func TestNotePartsKeepTheNote(t *testing.T) {
	for name, s := range noteScenarios {
		run, res := s.fit(t)
		parts := NoteParts(run, res)
		var all []string
		for _, p := range parts {
			all = append(all, p.Text)
		}
		note := Note(run, res)
		if got, want := len(strings.Join(all, " ")), len(note); got != want {
			t.Errorf("%s: the parts hold %d characters, the note %d", name, got, want)
		}
		if parts[0].Heading != "What we found" {
			t.Errorf("%s: the first part is %q", name, parts[0].Heading)
		}
		for _, sen := range writeNote(run, res).sentences {
			if !strings.Contains(note, sen.text) || !strings.Contains(partText(parts, partHeadings[sen.part]), sen.text) {
				t.Errorf("%s: a sentence is not under %q:\n%s", name, partHeadings[sen.part], sen.text)
			}
		}
	}
}

func partText(parts []NotePart, heading string) string {
	for _, p := range parts {
		if p.Heading == heading {
			return p.Text
		}
	}
	return ""
}
