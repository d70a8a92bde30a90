package report

import (
	"strings"
	"testing"
)

// cellTexts lists the text of every cell of the sheet's blocks.
func cellTexts(s *Sheet) []string {
	var out []string
	for _, b := range s.Blocks {
		out = append(out, b.Title)
		for _, row := range b.Rows {
			for _, c := range row {
				out = append(out, c.Text)
			}
		}
	}
	return out
}

func hasText(texts []string, want string) bool {
	for _, t := range texts {
		if strings.Contains(t, want) {
			return true
		}
	}
	return false
}

// TestSheetBootstrapColumns checks that the wild cluster bootstrap's
// p-values and intervals appear as columns of the effects and differences
// when it ran, with the settings saying how, and not otherwise.
func TestSheetBootstrapColumns(t *testing.T) {
	on := noteScenarios["few-clusters-labels"]
	run, res := on.fit(t)
	s, err := Build(run, res)
	if err != nil {
		t.Fatal(err)
	}
	texts := cellTexts(s)
	for _, want := range []string{"Bootstrap p-value", "Bootstrap 95% CI low", "Bootstrap 95% CI high", "Bootstrap columns: restricted wild cluster bootstrap-t over 8 clusters, 9999 draws, Webb's six-point weights, seed 0"} {
		if !hasText(texts, want) {
			t.Errorf("bootstrap on: the sheet lacks %q", want)
		}
	}
	// The bootstrap's columns stand in a table of their own below the
	// effects, a row a group, so that the effects table prints legibly.
	effects := blockByKey(s, "effects").Rows
	groups := len(res.Effects)
	if len(effects[0]) != len(effects[1]) {
		t.Errorf("effects table: heading %d cells, first row %d", len(effects[0]), len(effects[1]))
	}
	sub := -1
	for i, row := range effects {
		if len(row) > 1 && row[1].Text == "Bootstrap p-value" {
			sub = i
		}
	}
	if sub < 0 || len(effects) < sub+1+groups {
		t.Fatalf("effects block has no bootstrap table: %v", effects)
	}
	for g, e := range res.Effects {
		row := effects[sub+1+g]
		if len(row) != 4 || row[1].Kind != PValue || row[1].Value != e.Boot.P || !strings.HasPrefix(row[0].Text, e.Group) {
			t.Errorf("bootstrap row %d: %v", g, row)
		}
	}
	if got := settingValue(s, "Wild cluster bootstrap"); !strings.HasPrefix(got, "restricted wild cluster bootstrap-t") {
		t.Errorf("settings say %q", got)
	}

	off := noteScenarios["few-clusters-no-bootstrap"]
	run, res = off.fit(t)
	if s, err = Build(run, res); err != nil {
		t.Fatal(err)
	}
	if hasText(cellTexts(s), "Bootstrap") || settingValue(s, "Wild cluster bootstrap") != "turned off" {
		t.Errorf("bootstrap off: bootstrap columns shown, or settings say %q", settingValue(s, "Wild cluster bootstrap"))
	}
	run, res = noteScenarios["binary-clear-randomized"].fit(t)
	if s, err = Build(run, res); err != nil {
		t.Fatal(err)
	}
	if got := settingValue(s, "Wild cluster bootstrap"); got != "not used (it needs a cluster column)" {
		t.Errorf("no clusters: settings say %q", got)
	}
}

func settingValue(s *Sheet, label string) string {
	for _, st := range s.Settings {
		if st.Label == label {
			return st.Value
		}
	}
	return ""
}

// blockByKey returns the sheet's block of that key, or an empty block.
func blockByKey(s *Sheet, key string) Block {
	for _, b := range s.Blocks {
		if b.Key == key {
			return b
		}
	}
	return Block{}
}
