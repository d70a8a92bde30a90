package gui

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
	"github.com/xuri/excelize/v2"
)

// openCSV opens a CSV of the given text in a new window and moves to the
// Roles step.
func openCSV(t *testing.T, name, text string) *harness {
	t.Helper()
	src := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(src, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	h := newHarness(t, Options{ChooseOpen: func(done func(string)) { done(src) }})
	test.Tap(h.u.openScreen.openBtn)
	h.wait()
	test.Tap(h.u.next)
	if h.u.current != stepRoles {
		t.Fatalf("not on the Roles step: %d", h.u.current)
	}
	return h
}

// rowsOf makes n CSV rows from a function of the row number.
func rowsOf(header string, n int, row func(i int) string) string {
	var b strings.Builder
	b.WriteString(header + "\n")
	for i := range n {
		b.WriteString(row(i) + "\n")
	}
	return b.String()
}

// TestDefaultRoles: the treatment and outcome chosen on three differently
// shaped tables, and "Before running" saying what was chosen and why.
func TestDefaultRoles(t *testing.T) {
	itoa := func(i int) string { return string(rune('0' + i%10)) }
	cases := []struct {
		name, csv          string
		treatment, outcome string
		words              string
	}{
		{"a 0/1 column named as the programme after another 0/1 column; an identifier; scores before and after",
			rowsOf("pupil_id,female,got_tutoring,pre_score,post_score,age,school", 60, func(i int) string {
				return strings.Join([]string{
					itoa(i) + itoa(i/10) + itoa(i/100), itoa(i % 2), itoa(i / 2 % 2), "5" + itoa(i), "6" + itoa(i*7), "1" + itoa(i%5), "s" + itoa(i%4),
				}, ",")
			}),
			"got_tutoring", "post_score", "its name says who received the programme"},
		{"a treatment of two labels; the outcome after the moderator",
			rowsOf("region,coached,earnings", 60, func(i int) string {
				arm := "no"
				if i%2 == 1 {
					arm = "yes"
				}
				return "r" + itoa(i%3) + "," + arm + ",1" + itoa(i*3) + "0"
			}),
			"coached", "earnings", "a number named as a result"},
		{"no name says anything",
			rowsOf("a,b,c,d", 60, func(i int) string {
				return "g" + itoa(i%3) + "," + itoa(i%2) + "," + itoa(i*7) + "." + itoa(i) + ",x" + itoa(i%2)
			}),
			"b", "c", "check it"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			h := openCSV(t, "table.csv", c.csv)
			r := h.u.rolesScreen
			if r.treatment.Selected != c.treatment || r.outcome.Selected != c.outcome {
				t.Errorf("treatment %q, outcome %q; want %q, %q", r.treatment.Selected, r.outcome.Selected, c.treatment, c.outcome)
			}
			said := checksText(r)
			if !strings.Contains(said, "Chosen for you") || !strings.Contains(said, c.words) {
				t.Errorf("Before running does not say what was chosen and why (%q):\n%s", c.words, said)
			}
			// Once changed by the person, the choice is theirs.
			r.outcome.SetSelected(c.treatment)
			r.outcome.SetSelected(c.outcome)
			r.treatment.SetSelected(r.treatment.Options[len(r.treatment.Options)-1])
			if strings.Contains(checksText(r), "treatment \""+c.treatment+"\" (") {
				t.Errorf("the treatment is still said to be chosen for the person:\n%s", checksText(r))
			}
		})
	}
}

// TestRoleConflictsBlocked: one column in two roles is blocked on the
// Roles step, with the fit's own words, before Run.
func TestRoleConflictsBlocked(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	r := u.rolesScreen
	for _, c := range []struct {
		name  string
		set   func()
		words string
	}{
		{"outcome and treatment", func() { r.outcome.SetSelected("coached") }, `Column "coached" is chosen as both outcome and treatment.`},
		{"treatment and moderator", func() {
			r.outcome.SetSelected("earnings_6m")
			r.moderator.SetSelected("coached")
		}, `Column "coached" is chosen as both treatment and moderator.`},
		{"moderator and cluster", func() {
			r.moderator.SetSelected("region")
			r.cluster.SetSelected("region")
		}, `Column "region" is chosen as both moderator and cluster.`},
		{"outcome and weights", func() {
			r.cluster.SetSelected(none)
			r.weights.SetSelected("earnings_6m")
		}, `Column "earnings_6m" is chosen as both outcome and weights.`},
	} {
		c.set()
		if !strings.Contains(checksText(r), c.words) {
			t.Errorf("%s: the checks do not say %q:\n%s", c.name, c.words, checksText(r))
		}
		if !u.next.Disabled() || r.ready() {
			t.Errorf("%s: Next is not blocked", c.name)
		}
	}
	r.weights.SetSelected(none)
	if !r.ready() {
		t.Errorf("with the conflicts undone the roles are not ready:\n%s", checksText(r))
	}
}

// TestTreatmentExplained: a treatment of several labels says that each
// is compared with the comparison group as an arm; one of amounts says it
// is read as a dose;
// text holding numbers is said to be why it is not offered as the outcome.
func TestTreatmentExplained(t *testing.T) {
	arms := []string{"control", "coaching", "coaching and stipend"}
	h := openCSV(t, "arms.csv", rowsOf("arm,score,weight,site", 60, func(i int) string {
		return arms[i%3] + "," + string(rune('1'+i%9)) + "0," + string(rune('4'+i%5)) + " kg,s" + string(rune('a'+i%4))
	}))
	r := h.u.rolesScreen
	r.treatment.SetSelected("arm")
	r.control.SetSelected("control")
	said := checksText(r)
	if !strings.Contains(said, `"arm" has 3 values: "coaching" and "coaching and stipend" are each compared with "control" as arms of their own`) {
		t.Errorf("three arms not explained:\n%s", said)
	}
	if !strings.Contains(said, `Not offered as the outcome: "weight"`) {
		t.Errorf("the text outcome is not explained:\n%s", said)
	}
	r.treatment.SetSelected("score")
	if !strings.Contains(checksText(r), `"score" holds amounts, not two groups`) {
		t.Errorf("a treatment of amounts is not explained:\n%s", checksText(r))
	}
}

// TestManyGroupsStayResponsive: a moderator of 200 groups (19,900 pairs)
// is announced on the Roles step, and the findings are laid out with a
// bounded number of objects: the long tables make only the cells in
// sight. (A count, not a time: the machines are noisy.)
func TestManyGroupsStayResponsive(t *testing.T) {
	h := openCSV(t, "groups.csv", rowsOf("score,tutored,centre", 2000, func(i int) string {
		return strconv.Itoa((i*7919)%101) + "," + strconv.Itoa(i/200%2) + ",c" + strconv.Itoa(i%200)
	}))
	u := h.u
	r := u.rolesScreen
	r.outcome.SetSelected("score")
	r.treatment.SetSelected("tutored")
	r.moderator.SetSelected("centre")
	r.modKind.SetSelected(kindGroups)
	if !strings.Contains(checksText(r), `"centre" has 200 groups, so the findings will list 19,900 differences`) {
		t.Errorf("the many groups are not announced:\n%s", checksText(r))
	}
	test.Tap(u.next)
	test.Tap(u.next) // run
	h.wait()
	if u.analysis == nil || len(u.analysis.Result.Differences) != 19900 {
		t.Fatalf("no analysis of 200 groups: %s", h.overlayText())
	}
	objects := 0
	for _, tab := range []int{0, 1, 2} {
		tabs := u.findingsScreen.view.(*container.AppTabs)
		if tab >= len(tabs.Items) {
			break
		}
		tabs.SelectIndex(tab)
		objects = max(objects, len(test.LaidOutObjects(h.w.Canvas().Content())))
	}
	// About 4,000 objects: the short tables, the paragraphs and the cells
	// in sight; a widget a cell would be some 200,000.
	if objects > 20000 {
		t.Errorf("the findings are laid out with %d objects", objects)
	}
	t.Logf("most objects laid out on a tab: %d", objects)
}

// TestClusteredNamesItsColumn: the clustered type names the cluster column
// chosen; with none, choosing it holds the run back and says what to do.
func TestClusteredNamesItsColumn(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	u.rolesScreen.cluster.SetSelected("region")
	u.rolesScreen.moderator.SetSelected("first_time")
	test.Tap(u.next)
	o := u.optionsScreen
	if o.se.Selected != "Clustered by region (CR1)" {
		t.Errorf("with region as the cluster the choice reads %q", o.se.Selected)
	}
	test.Tap(u.back)
	u.rolesScreen.cluster.SetSelected(none)
	test.Tap(u.next)
	if o.se.Selected != "Robust (HC3)" {
		t.Errorf("without a cluster the default is %q", o.se.Selected)
	}
	o.se.SetSelected(o.label(crChoice))
	if !u.next.Disabled() || !strings.Contains(o.seWhy.Text, "No cluster column is chosen") {
		t.Errorf("clustered without a cluster: Run enabled %v, %q", !u.next.Disabled(), o.seWhy.Text)
	}
}

func TestCountWords(t *testing.T) {
	for n, want := range map[int]string{0: "0 rows", 1: "1 row", 2: "2 rows", 1200: "1200 rows", 19900: "19,900 rows", 500000: "500,000 rows"} {
		if got := count(n, "row"); got != want {
			t.Errorf("count(%d) = %q, want %q", n, got, want)
		}
	}
}

// TestCoverSheetPassedOver: a workbook whose first sheet is a cover of a
// title and a note opens on its first sheet that holds a table, and the
// Rows step says what each sheet read holds.
func TestCoverSheetPassedOver(t *testing.T) {
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "About")
	f.SetCellValue("About", "A1", "Tutoring pilot, spring term")
	f.SetCellValue("About", "A2", "Prepared by the evaluation team")
	f.NewSheet("Pupils")
	f.NewSheet("Notes")
	f.SetSheetRow("Notes", "A1", &[]any{"Collected by the schools in May"})
	f.SetSheetRow("Notes", "A2", &[]any{"Scores out of 100"})
	f.SetSheetRow("Pupils", "A1", &[]any{"score", "tutored", "area"})
	for i := range 40 {
		f.SetSheetRow("Pupils", "A"+strconv.Itoa(i+2), &[]any{(i * 37) % 101, i % 2, string(rune('a' + i%3))})
	}
	src := filepath.Join(t.TempDir(), "pilot.xlsx")
	if err := f.SaveAs(src); err != nil {
		t.Fatal(err)
	}
	h := newHarness(t, Options{ChooseOpen: func(done func(string)) { done(src) }})
	test.Tap(h.u.openScreen.openBtn)
	h.wait()
	if h.u.table == nil || h.u.table.Sheet != "Pupils" {
		t.Fatalf("opened on sheet %v", h.u.table)
	}
	var said string
	for _, o := range test.LaidOutObjects(h.w.Canvas().Content()) {
		if l, ok := o.(*widget.Label); ok && strings.Contains(l.Text, "About:") {
			said = l.Text
		}
	}
	want := `About: 1 row, 1 column · Pupils: 40 rows, 3 columns · Notes: 2 rows of cells. "Pupils" is shown: the first sheet that holds a table of data.`
	if said != want {
		t.Errorf("the Rows step says %q, want %q", said, want)
	}

	// With results added, the results sheet is not offered as data.
	r := h.u.rolesScreen
	test.Tap(h.u.next)
	r.outcome.SetSelected("score")
	r.treatment.SetSelected("tutored")
	r.moderator.SetSelected("area")
	test.Tap(h.u.next)
	test.Tap(h.u.next) // run
	h.wait()
	test.Tap(h.u.findingsScreen.saveBtn)
	h.wait()
	h.w.Canvas().OnTypedKey()(&fyne.KeyEvent{Name: fyne.KeyEscape})
	h.u.open(src)
	h.wait()
	if got := strings.Join(h.u.rowsScreen.sheet.Options, ","); got != "About,Pupils,Notes" {
		t.Errorf("sheets offered after the results were added: %s (the workbook has %v)", got, h.u.sheets)
	}
}

// TestRolesRemembered: the roles of a run come back when the same sheet
// is opened again, and "Before running" says so.
func TestRolesRemembered(t *testing.T) {
	h := newHarness(t, Options{})
	u := h.u
	h.demoRoles()
	r := u.rolesScreen
	r.moderator.SetSelected("first_time")
	r.cluster.SetSelected("site")
	r.controls.SetSelected([]string{"age"})
	test.Tap(u.next)
	test.Tap(u.next) // run
	h.wait()
	if u.analysis == nil {
		t.Fatalf("no analysis: %s", h.overlayText())
	}
	u.open(u.path)
	h.wait()
	test.Tap(u.next)
	if r.moderator.Selected != "first_time" || r.cluster.Selected != "site" || strings.Join(r.controls.Selected, ",") != "age" {
		t.Errorf("roles after reopening: moderator %q, cluster %q, controls %v", r.moderator.Selected, r.cluster.Selected, r.controls.Selected)
	}
	if said := checksText(r); !strings.Contains(said, "The roles of the last run on this sheet are back") || strings.Contains(said, "Chosen for you") {
		t.Errorf("Before running after reopening:\n%s", said)
	}
}

// TestAdviceTheWindowCanFollow: a row fitted perfectly offers a button
// that allows HC1 for such rows and runs again, and says which control to
// untick; terms that cannot be told apart name the control to untick.
func TestAdviceTheWindowCanFollow(t *testing.T) {
	h := openCSV(t, "pupils.csv", rowsOf("score,tutored,area,school,hours,minutes", 80, func(i int) string {
		school := "s" + strconv.Itoa(i/2%4)
		if i == 79 {
			school = "lone" // one row: its indicator fits it perfectly
		}
		hours := (i*7)%13 + 1
		return strconv.Itoa((i*7919)%101) + "," + strconv.Itoa(i%2) + ",a" + strconv.Itoa(i%3) + "," + school + "," + strconv.Itoa(hours) + "," + strconv.Itoa(60*hours)
	}))
	u := h.u
	r := u.rolesScreen
	r.outcome.SetSelected("score")
	r.treatment.SetSelected("tutored")
	r.moderator.SetSelected("area")
	r.controls.SetSelected([]string{"school"})
	test.Tap(u.next)
	if u.optionsScreen.variance() != "HC3" {
		t.Fatalf("standard errors %q", u.optionsScreen.variance())
	}
	test.Tap(u.next) // run
	h.wait()
	said := h.overlayText()
	if u.analysis != nil || !strings.Contains(said, `untick that control`) || !strings.Contains(said, "[Use HC1 for such rows and run again]") {
		t.Fatalf("a row of leverage 1:\n%s", said)
	}
	h.tapButton("Use HC1 for such rows and run again")
	h.wait()
	if u.analysis == nil || !u.optionsScreen.hc1Fallback.Checked {
		t.Fatalf("no analysis after allowing HC1: %s", h.overlayText())
	}

	test.Tap(u.stepBtns[stepRoles])
	r.controls.SetSelected([]string{"hours", "minutes"})
	test.Tap(u.next)
	test.Tap(u.next)
	h.wait()
	if said := h.overlayText(); !strings.Contains(said, `untick "hours" or "minutes" under "Adjust for"`) {
		t.Errorf("terms that cannot be told apart:\n%s", said)
	}
}
