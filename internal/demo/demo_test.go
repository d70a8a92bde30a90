package demo

import (
	"bufio"
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"testing"

	"github.com/xuri/excelize/v2"

	"slopewise/assets"
	"slopewise/internal/io/workbook"
)

const regenerate = "go run ./internal/demo/gen assets/demo.xlsx assets/demo-rollout.xlsx"

func open(t *testing.T, b []byte) *excelize.File {
	t.Helper()
	f, err := excelize.OpenReader(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	return f
}

// TestCommittedAssetIsCurrent compares cell values and formulas, not
// bytes, so that a change in how excelize packs the file does not count.
func TestCommittedAssetIsCurrent(t *testing.T) {
	fresh, err := Workbook()
	if err != nil {
		t.Fatal(err)
	}
	again, err := Workbook()
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(fresh, again) {
		t.Error("two calls of Workbook gave different bytes")
	}
	want, got := open(t, fresh), open(t, assets.DemoWorkbook)
	sheets := want.GetSheetList()
	if !slices.Equal(got.GetSheetList(), sheets) || !slices.Equal(sheets, []string{SheetParticipants, SheetNotes}) {
		t.Fatalf("sheets: committed %q, fresh %q; run %s", got.GetSheetList(), sheets, regenerate)
	}
	for _, sh := range sheets {
		w, err := want.GetRows(sh, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		g, err := got.GetRows(sh, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		if len(w) != len(g) {
			t.Fatalf("sheet %q: committed asset has %d rows, fresh workbook %d; run %s", sh, len(g), len(w), regenerate)
		}
		for r := range w {
			if !slices.Equal(w[r], g[r]) {
				t.Fatalf("sheet %q row %d: committed %q, fresh %q; run %s", sh, r+1, g[r], w[r], regenerate)
			}
		}
	}
	for _, m := range MessyCells() {
		wf, _ := want.GetCellFormula(SheetParticipants, m.Cell)
		gf, _ := got.GetCellFormula(SheetParticipants, m.Cell)
		if wf != gf {
			t.Errorf("%s: committed formula %q, fresh %q; run %s", m.Cell, gf, wf, regenerate)
		}
	}
}

// TestLayout checks the title, the header row and that every cell is a
// number where a number belongs, except the messy cells, which hold what
// MessyCells says.
func TestLayout(t *testing.T) {
	f := open(t, assets.DemoWorkbook)
	if v, _ := f.GetCellValue(SheetParticipants, "A1"); v != Title {
		t.Errorf("A1 = %q, want the title", v)
	}
	if v, _ := f.GetCellValue(SheetParticipants, "A2"); v != "" {
		t.Errorf("A2 = %q, want blank", v)
	}
	for c, name := range Columns() {
		if v, _ := f.GetCellValue(SheetParticipants, cellRef(c, HeaderRow)); v != name {
			t.Errorf("header %s = %q, want %q", cellRef(c, HeaderRow), v, name)
		}
	}
	messy := map[string]MessyCell{}
	for _, m := range MessyCells() {
		messy[m.Cell] = m
	}
	numeric := []string{"E", "F", "G", "H"}
	for r := HeaderRow + 1; r <= HeaderRow+Rows; r++ {
		for _, col := range numeric {
			ref := col + strconv.Itoa(r)
			typ, err := f.GetCellType(SheetParticipants, ref)
			if err != nil {
				t.Fatal(err)
			}
			v, _ := f.GetCellValue(SheetParticipants, ref, excelize.Options{RawCellValue: true})
			if m, ok := messy[ref]; ok {
				checkMessy(t, f, m, typ, v)
				continue
			}
			if _, err := strconv.ParseFloat(v, 64); err != nil || (typ != excelize.CellTypeUnset && typ != excelize.CellTypeNumber) {
				t.Errorf("%s = %q (type %v), want a number", ref, v, typ)
			}
		}
	}
	if v, _ := f.GetCellValue(SheetParticipants, cellRef(0, HeaderRow+Rows+1)); v != "" {
		t.Errorf("a row below the last participant holds %q", v)
	}
}

func checkMessy(t *testing.T, f *excelize.File, m MessyCell, typ excelize.CellType, v string) {
	t.Helper()
	if v != m.Content {
		t.Errorf("%s = %q, want %q", m.Cell, v, m.Content)
	}
	want := excelize.CellTypeSharedString
	switch m.Content {
	case ContentBlank:
		want = excelize.CellTypeUnset
	case ContentDivByZero:
		want = excelize.CellTypeError
		if fm, _ := f.GetCellFormula(SheetParticipants, m.Cell); fm != divByZeroFormula {
			t.Errorf("%s formula %q, want %q", m.Cell, fm, divByZeroFormula)
		}
	}
	if typ != want {
		t.Errorf("%s has type %v, want %v", m.Cell, typ, want)
	}
}

var (
	readmeCell   = regexp.MustCompile("^\\| `([A-Z]+[0-9]+)` \\| `([a-z_0-9]+)` \\| (.*) \\|$")
	readmeEffect = regexp.MustCompile("^\\| `([a-z_]+)` \\| ([A-Za-z]+) \\| ([0-9.]+) \\|$")
)

// TestReadme checks that the tables of assets/README.md list exactly the
// messy cells and the true effects of this package.
func TestReadme(t *testing.T) {
	f, err := os.Open(filepath.Join("..", "..", "assets", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var cells []MessyCell
	effects := map[string]map[string]float64{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if m := readmeCell.FindStringSubmatch(line); m != nil {
			cells = append(cells, MessyCell{m[1], m[2], readmeContent(m[3])})
		}
		if m := readmeEffect.FindStringSubmatch(line); m != nil {
			v, _ := strconv.ParseFloat(m[3], 64)
			if effects[m[1]] == nil {
				effects[m[1]] = map[string]float64{}
			}
			effects[m[1]][m[2]] = v
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(cells, MessyCells()) {
		t.Errorf("README lists the messy cells\n%q\nwant\n%q", cells, MessyCells())
	}
	for _, mod := range []string{ColFirstTime, ColRegion} {
		if !mapsEqual(effects[mod], TrueEffects(mod)) {
			t.Errorf("README gives the effects by %s as %v, want %v", mod, effects[mod], TrueEffects(mod))
		}
	}
	if len(effects) != 2 {
		t.Errorf("README has effects for %d moderators, want 2", len(effects))
	}
}

// readmeContent turns the README's description of a cell back into its
// content: "blank", "the text `N/A`", "the error value `#DIV/0!` …".
func readmeContent(s string) string {
	if s == "blank" {
		return ContentBlank
	}
	m := regexp.MustCompile("`([^`]+)`").FindStringSubmatch(s)
	if m == nil {
		return "?" + s
	}
	return m[1]
}

func mapsEqual(a, b map[string]float64) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if w, ok := b[k]; !ok || math.Abs(v-w) > 1e-9 {
			return false
		}
	}
	return true
}

// TestTrueEffects checks TrueEffects and TrueEffectAt against the values
// the process was designed to give, and against averages of θ taken
// directly: over the two first_time groups (equally likely) and the four
// regions (equal in size) at the mean score of 50.
func TestTrueEffects(t *testing.T) {
	want := map[string]map[string]float64{
		ColFirstTime: {"no": 190, "yes": 330},
		ColRegion:    {"North": 250, "Harbour": 330, "Valley": 190, "Plains": 270},
	}
	for mod, w := range want {
		if got := TrueEffects(mod); !mapsEqual(got, w) {
			t.Errorf("TrueEffects(%q) = %v, want %v", mod, got, w)
		}
	}
	for _, m := range []float64{0, 35, 50, 65, 100} {
		if got, w := TrueEffectAt(m), 260+4*(m-50); math.Abs(got-w) > 1e-9 {
			t.Errorf("TrueEffectAt(%v) = %v, want %v", m, got, w)
		}
	}
	for _, mod := range []string{ColBaselineScore, ColSite, "nonsense"} {
		if got := TrueEffects(mod); got != nil {
			t.Errorf("TrueEffects(%q) = %v, want nil", mod, got)
		}
	}

	byFirst, byRegion := TrueEffects(ColFirstTime), TrueEffects(ColRegion)
	regions := Regions()
	var all float64
	for g, name := range regions {
		avg := (effect(false, g, 50) + effect(true, g, 50)) / 2
		if math.Abs(byRegion[name]-avg) > 1e-9 {
			t.Errorf("region %s: %v, but θ averages %v over first_time", name, byRegion[name], avg)
		}
		all += avg / float64(len(regions))
	}
	for f, name := range []string{"no", "yes"} {
		var avg float64
		for g := range regions {
			avg += effect(f == 1, g, 50) / float64(len(regions))
		}
		if math.Abs(byFirst[name]-avg) > 1e-9 {
			t.Errorf("first_time %s: %v, but θ averages %v over regions", name, byFirst[name], avg)
		}
	}
	var regionMean float64
	for _, v := range byRegion {
		regionMean += v / float64(len(byRegion))
	}
	firstMean := (byFirst["no"] + byFirst["yes"]) / 2
	for name, v := range map[string]float64{"regions": regionMean, "first_time groups": firstMean, "all θ": all} {
		if math.Abs(v-TrueEffectAt(50)) > 1e-9 {
			t.Errorf("the effects averaged over %s give %v, want TrueEffectAt(50) = %v", name, v, TrueEffectAt(50))
		}
	}
}

// TestCellsFollowProcess recomputes each earnings cell from the other
// cells of its row and the unobserved draws (u_s, ε_i), and checks that
// θ averaged over the drawn participants of each group is near its true
// effect: within four standard errors of a mean of θ, whose spread comes
// from the score (4·15) and, within a region, first_time (140·0.5).
func TestCellsFollowProcess(t *testing.T) {
	people := draw()
	if len(people) != Rows {
		t.Fatalf("%d participants, want %d", len(people), Rows)
	}
	f := open(t, assets.DemoWorkbook)
	rows, err := f.GetRows(SheetParticipants, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	num := func(r []string, c int) (float64, bool) {
		if c >= len(r) {
			return 0, false
		}
		v, err := strconv.ParseFloat(r[c], 64)
		return v, err == nil
	}
	checked := 0
	for i, p := range people {
		r := rows[HeaderRow+i]
		score, ok1 := num(r, 4)
		age, ok2 := num(r, 5)
		coached, ok3 := num(r, 6)
		y, ok4 := num(r, 7)
		if !ok1 || !ok2 || !ok3 || !ok4 {
			continue
		}
		checked++
		first := r[3] == "yes"
		g := slices.Index(Regions(), r[2])
		fit := earningsBase + 10*(age-35) + 6*(score-50) + coached*effect(first, g, score) + p.siteEffect + p.noise
		if math.Abs(y-fit) > 0.005+1e-9 {
			t.Errorf("row %d: earnings %v, the process gives %v", HeaderRow+1+i, y, fit)
		}
	}
	if checked != Rows-len(MessyCells()) {
		t.Errorf("checked %d rows, want %d", checked, Rows-len(MessyCells()))
	}

	type acc struct{ sum, n float64 }
	groups := map[string]*acc{}
	add := func(key string, v float64) {
		if groups[key] == nil {
			groups[key] = &acc{}
		}
		groups[key].sum += v
		groups[key].n++
	}
	for _, p := range people {
		add(ColFirstTime+"="+yesNo(p.firstTime), p.effect)
		add(ColRegion+"="+p.region, p.effect)
	}
	for mod, sd := range map[string]float64{ColFirstTime: 4 * 15, ColRegion: math.Hypot(4*15, 140*0.5)} {
		for g, want := range TrueEffects(mod) {
			a := groups[mod+"="+g]
			if got, tol := a.sum/a.n, 4*sd/math.Sqrt(a.n); math.Abs(got-want) > tol {
				t.Errorf("%s = %s: θ averages %.1f over %v participants, want %v ± %.1f", mod, g, got, a.n, want, tol)
			}
		}
	}
}

// TestReadBack reads the committed workbook with Slopewise's own reader.
func TestReadBack(t *testing.T) {
	path := filepath.Join(t.TempDir(), "demo.xlsx")
	if err := os.WriteFile(path, assets.DemoWorkbook, 0o600); err != nil {
		t.Fatal(err)
	}
	tab, err := workbook.Read(context.Background(), path, workbook.Options{Sheet: SheetParticipants})
	if err != nil {
		t.Fatal(err)
	}
	if tab.HeaderRow != HeaderRow || !tab.HeaderDetected {
		t.Errorf("header row %d (detected %v), want %d found by the reader", tab.HeaderRow, tab.HeaderDetected, HeaderRow)
	}
	if tab.Len() != Rows {
		t.Errorf("%d data rows, want %d", tab.Len(), Rows)
	}
	kinds := map[string]workbook.Kind{
		ColParticipantID: workbook.Text,
		ColSite:          workbook.Category,
		ColRegion:        workbook.Category,
		ColFirstTime:     workbook.YesNo,
		ColBaselineScore: workbook.Number,
		ColAge:           workbook.Number,
		ColCoached:       workbook.YesNo,
		ColEarnings:      workbook.Number,
	}
	reason := map[string]workbook.Reason{
		ContentBlank:     workbook.Blank,
		ContentNA:        workbook.Marker,
		ContentDash:      workbook.Marker,
		ContentDivByZero: workbook.ErrorValue,
	}
	var names []string
	for _, c := range tab.Columns {
		names = append(names, c.Name)
		if c.Kind != kinds[c.Name] {
			t.Errorf("column %s is %v, want %v", c.Name, c.Kind, kinds[c.Name])
		}
	}
	if !slices.Equal(names, Columns()) {
		t.Fatalf("columns %q, want %q", names, Columns())
	}
	want := map[string]workbook.Reason{}
	for _, m := range MessyCells() {
		want["cell "+m.Cell] = reason[m.Content]
	}
	for _, p := range tab.Problems() {
		ref := "cell " + p.Column.Letter + strconv.Itoa(tab.SourceRows[p.Row])
		if want[ref] != p.Reason {
			t.Errorf("%s: the reader says %v, want %v", tab.Describe(p), p.Reason, want[ref])
		}
		delete(want, ref)
	}
	for ref, r := range want {
		t.Errorf("%s: the reader found no %v", ref, r)
	}
	for _, c := range tab.Columns {
		t.Logf("%-15s %-8v missing %v", c.Name, c.Kind, missingByReason(c))
	}
	checkShape(t, tab)
}

// checkShape checks the design: 24 sites of 50 in four regions of six
// sites, 25 coached at each site, and, among the rows with no missing
// cell, both arms in every site, region and first_time group and in
// every site × first_time cell.
func checkShape(t *testing.T, tab *workbook.Table) {
	t.Helper()
	site, region := tab.Column(ColSite), tab.Column(ColRegion)
	first, coached := tab.Column(ColFirstTime), tab.Column(ColCoached)
	if !slices.Equal(region.Levels, slices.Sorted(slices.Values(Regions()))) {
		t.Errorf("regions %q, want %q", region.Levels, Regions())
	}
	if len(site.Levels) != Sites {
		t.Errorf("%d sites, want %d", len(site.Levels), Sites)
	}
	if !slices.Equal(first.Levels, []string{"no", "yes"}) && !slices.Equal(first.Levels, []string{"yes", "no"}) {
		t.Errorf("first_time levels %q", first.Levels)
	}
	perSite, coachedPerSite := map[string]int{}, map[string]int{}
	regionOf := map[string]string{}
	arms := map[string][2]int{}
	complete := 0
	for i := range tab.Len() {
		s, g := site.Texts[i], region.Texts[i]
		perSite[s]++
		coachedPerSite[s] += int(coached.Numbers[i])
		if r, ok := regionOf[s]; ok && r != g {
			t.Errorf("site %s is in regions %s and %s", s, r, g)
		}
		regionOf[s] = g
		if slices.ContainsFunc(tab.Columns, func(c *workbook.Column) bool { return c.Missing[i] != workbook.Present }) {
			continue
		}
		complete++
		arm := int(coached.Numbers[i])
		for _, key := range []string{"site " + s, "region " + g, "first_time " + first.Texts[i], "site " + s + " × first_time " + first.Texts[i]} {
			a := arms[key]
			a[arm]++
			arms[key] = a
		}
	}
	if complete != Rows-len(MessyCells()) {
		t.Errorf("%d rows without a missing cell, want %d", complete, Rows-len(MessyCells()))
	}
	for s, n := range perSite {
		if n != PerSite || coachedPerSite[s] != CoachedPerSite {
			t.Errorf("site %s has %d participants, %d coached; want %d, %d", s, n, coachedPerSite[s], PerSite, CoachedPerSite)
		}
	}
	sitesIn := map[string]int{}
	for _, g := range regionOf {
		sitesIn[g]++
	}
	for _, g := range Regions() {
		if sitesIn[g] != SitesPerRegion {
			t.Errorf("region %s has %d sites, want %d", g, sitesIn[g], SitesPerRegion)
		}
	}
	if want := Sites + len(Regions()) + 2 + 2*Sites; len(arms) != want {
		t.Errorf("%d groups among complete rows, want %d", len(arms), want)
	}
	for key, a := range arms {
		if a[0] == 0 || a[1] == 0 {
			t.Errorf("%s: %d not coached, %d coached among complete rows", key, a[0], a[1])
		}
	}
}

func missingByReason(c *workbook.Column) map[string]int {
	out := map[string]int{}
	for r, n := range c.MissingCount {
		if n > 0 {
			out[workbook.Reason(r).String()] = n
		}
	}
	return out
}

// TestReadmeRemarks checks the remarks of assets/README.md about the
// drawn values: the scores at the clip bounds, the negative earnings and
// the number of first-time job seekers.
func TestReadmeRemarks(t *testing.T) {
	var clipped, negative []string
	firstTime := 0
	for i, p := range draw() {
		row := strconv.Itoa(HeaderRow + 1 + i)
		if p.score == scoreMin || p.score == scoreMax {
			clipped = append(clipped, "E"+row)
		}
		if p.earnings < 0 {
			negative = append(negative, "H"+row)
		}
		if p.firstTime {
			firstTime++
		}
	}
	if want := []string{"E59", "E325", "E610", "E742", "E955", "E1197"}; !slices.Equal(clipped, want) {
		t.Errorf("scores at the bounds in %q, README says %q", clipped, want)
	}
	if len(negative) != 0 {
		t.Errorf("negative earnings in %q, README says there are none", negative)
	}
	if firstTime != 601 {
		t.Errorf("%d first-time job seekers, README says 601", firstTime)
	}
}

// TestRolloutCommitted: the committed roll-out workbook is what
// RolloutWorkbook makes now (cell values), and its rows follow the
// process: two rows a person, 2023 then 2024, one arm a person, the
// comparison arm at exactly half the sites, three of them in each region.
func TestRolloutCommitted(t *testing.T) {
	fresh, err := RolloutWorkbook()
	if err != nil {
		t.Fatal(err)
	}
	want, got := open(t, fresh), open(t, assets.DemoRolloutWorkbook)
	for _, sh := range []string{SheetRollout, SheetNotes} {
		w, _ := want.GetRows(sh, excelize.Options{RawCellValue: true})
		g, _ := got.GetRows(sh, excelize.Options{RawCellValue: true})
		if len(w) == 0 || len(w) != len(g) {
			t.Fatalf("sheet %q: committed %d rows, fresh %d; run %s", sh, len(g), len(w), regenerate)
		}
		for r := range w {
			if !slices.Equal(w[r], g[r]) {
				t.Fatalf("sheet %q row %d: committed %q, fresh %q; run %s", sh, r+1, g[r], w[r], regenerate)
			}
		}
	}
	rows := drawRollout()
	if len(rows) != RolloutRows {
		t.Fatalf("%d rows, want %d", len(rows), RolloutRows)
	}
	comparison := map[string]map[string]bool{} // region → site → only "none"
	for i := 0; i < len(rows); i += 2 {
		a, b := rows[i], rows[i+1]
		if a.person != b.person || a.year != 2023 || b.year != 2024 || a.arm != b.arm {
			t.Fatalf("rows %d and %d: %+v, %+v", i, i+1, a, b)
		}
		if comparison[a.region] == nil {
			comparison[a.region] = map[string]bool{}
		}
		if _, seen := comparison[a.region][a.site]; !seen {
			comparison[a.region][a.site] = true
		}
		comparison[a.region][a.site] = comparison[a.region][a.site] && a.arm == ArmNone
	}
	for region, sites := range comparison {
		n := 0
		for _, none := range sites {
			if none {
				n++
			}
		}
		if len(sites) != SitesPerRegion || n != SitesPerRegion/2 {
			t.Errorf("region %s: %d sites, %d without the programme", region, len(sites), n)
		}
	}
}
