// Package demo makes the built-in demonstration workbook: the
// "Harbourline job-coaching pilot", an invented employment programme whose
// participant records are drawn by code from a stated data-generating
// process, so the true effect of coaching in every group is known.
//
// The sheet "Participants" holds Rows records, 50 at each of 24 sites;
// sites S01–S06 are in region North, S07–S12 Harbour, S13–S18 Valley and
// S19–S24 Plains. For participant i at site s in region g:
//
//	first_time_i     ~ Bernoulli(0.5)                      (F_i = 1 for "yes")
//	baseline_score_i = clip(round₁(50 + 15·z_i), 0, 100),  z_i ~ Normal(0, 1)
//	age_i            ~ Uniform{18, …, 64}
//	coached_i        = 1 for exactly 25 of the 50 at each site, chosen at random
//	u_s              ~ Normal(0, 120²)                     (one draw a site)
//	ε_i              ~ Normal(0, 350²)
//	θ_i              = 180 + 140·F_i + r_g + 4·(baseline_score_i − 50)
//	earnings_6m_i    = round₂(2000 + 10·(age_i − 35) + 6·(baseline_score_i − 50)
//	                          + u_s + coached_i·θ_i + ε_i)
//
// with r = {North: 0, Harbour: 80, Valley: −60, Plains: 20}; round₁ and
// round₂ round to one and two decimals. The earnings use the recorded
// (rounded) score. All draws are independent, first_time of everything,
// and the regions are equal in size, so averaging θ over the others gives
// the true effect of coaching in each group (see TrueEffects):
//
//	first_time = f:  180 + 140·f + mean(r) + 4·(E[score] − 50)   no 190, yes 330
//	region = g:      180 + 140·0.5 + r_g + 4·(E[score] − 50)     North 250, Harbour 330, Valley 190, Plains 270
//	score = m:       180 + 140·0.5 + mean(r) + 4·(m − 50)        260 + 4·(m − 50)
//
// where E[score] = 50 because the clipping is symmetric about 50. These
// are the effects of the process; the average of θ over the 1,200 drawn
// records differs from them by sampling.
//
// After the draws, a few cells are spoilt on purpose (see MessyCells), so
// that the demonstration shows how blanks, typed markers and error values
// are reported.
package demo

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"regexp"
	"strconv"

	"github.com/xuri/excelize/v2"
)

// Seed seeds the PCG generator that draws every value of the workbook.
const Seed uint64 = 20240611

// Size of the sample.
const (
	Rows           = 1200 // data rows on the Participants sheet
	Sites          = 24
	PerSite        = Rows / Sites // participants at each site
	CoachedPerSite = PerSite / 2  // participants coached at each site
	SitesPerRegion = 6
)

// Sheets and layout.
const (
	SheetParticipants = "Participants"
	SheetNotes        = "Notes"
	// Title is the text of cell A1 of the Participants sheet.
	Title = "Harbourline job-coaching pilot — participant records (invented demonstration data)"
	// HeaderRow is the sheet row of the column names; data start below it.
	HeaderRow = 3
)

// Column names, in sheet order (columns A to H).
const (
	ColParticipantID = "participant_id"
	ColSite          = "site"
	ColRegion        = "region"
	ColFirstTime     = "first_time"
	ColBaselineScore = "baseline_score"
	ColAge           = "age"
	ColCoached       = "coached"
	ColEarnings      = "earnings_6m"
)

// Columns returns the column names in sheet order.
func Columns() []string {
	return []string{ColParticipantID, ColSite, ColRegion, ColFirstTime, ColBaselineScore, ColAge, ColCoached, ColEarnings}
}

// Regions returns the region labels in the order their sites are numbered.
func Regions() []string {
	return []string{"North", "Harbour", "Valley", "Plains"}
}

// The data-generating process; the package comment states it as formulas.
const (
	pFirstTime       = 0.5
	scoreMean        = 50.0
	scoreSD          = 15.0
	scoreMin         = 0.0
	scoreMax         = 100.0
	ageMin           = 18
	ageMax           = 64
	earningsBase     = 2000.0
	ageCentre        = 35.0
	ageSlope         = 10.0
	scoreCentre      = 50.0
	scoreSlope       = 6.0
	siteSD           = 120.0
	noiseSD          = 350.0
	effectBase       = 180.0
	effectFirstTime  = 140.0
	effectScoreSlope = 4.0
)

// regionShift is r_g, in the order of Regions.
var regionShift = [...]float64{0, 80, -60, 20}

// TrueEffects gives the true effect of coached in each group of the
// moderator ColFirstTime (groups "no" and "yes") or ColRegion (the four
// Regions), averaged over the other variables as the package comment
// shows. Any other name gives nil; for ColBaselineScore use TrueEffectAt.
func TrueEffects(moderator string) map[string]float64 {
	scoreTerm := effectScoreSlope * (scoreMean - scoreCentre)
	switch moderator {
	case ColFirstTime:
		return map[string]float64{
			"no":  effectBase + meanRegionShift() + scoreTerm,
			"yes": effectBase + effectFirstTime + meanRegionShift() + scoreTerm,
		}
	case ColRegion:
		out := map[string]float64{}
		for g, name := range Regions() {
			out[name] = effectBase + effectFirstTime*pFirstTime + regionShift[g] + scoreTerm
		}
		return out
	}
	return nil
}

// TrueEffectAt gives the true effect of coached for participants whose
// baseline_score is score, averaged over first_time and region:
// 260 + 4·(score − 50).
func TrueEffectAt(score float64) float64 {
	return effectBase + effectFirstTime*pFirstTime + meanRegionShift() + effectScoreSlope*(score-scoreCentre)
}

func meanRegionShift() float64 {
	s := 0.0
	for _, r := range regionShift {
		s += r
	}
	return s / float64(len(regionShift))
}

// MessyCell is a cell of the Participants sheet spoilt on purpose.
type MessyCell struct {
	Cell   string // reference, such as "E57"
	Column string // column name
	// Content is what the cell holds: "" for a blank cell, typed text
	// ("N/A", "-"), or the error value "#DIV/0!" left by the formula 1/0.
	Content string
}

// Contents of the messy cells.
const (
	ContentBlank     = ""
	ContentNA        = "N/A"
	ContentDash      = "-"
	ContentDivByZero = "#DIV/0!"
)

const (
	divByZeroFormula = "1/0"
	// participantsSheet is the part that holds the Participants sheet:
	// excelize's first sheet, renamed.
	participantsSheet = "xl/worksheets/sheet1.xml"
)

// MessyCells lists the spoilt cells, each in its own row, in the order
// blank earnings, "N/A" earnings, #DIV/0! scores, "-" age.
func MessyCells() []MessyCell {
	return []MessyCell{
		{"H23", ColEarnings, ContentBlank},
		{"H311", ColEarnings, ContentBlank},
		{"H702", ColEarnings, ContentBlank},
		{"H1088", ColEarnings, ContentBlank},
		{"H145", ColEarnings, ContentNA},
		{"H590", ColEarnings, ContentNA},
		{"H967", ColEarnings, ContentNA},
		{"E57", ColBaselineScore, ContentDivByZero},
		{"E830", ColBaselineScore, ContentDivByZero},
		{"F404", ColAge, ContentDash},
	}
}

// participant is one drawn record, with the unobserved parts of the
// process kept for tests.
type participant struct {
	id, site, region string
	regionIndex      int
	firstTime        bool
	score            float64
	age              int
	coached          bool
	earnings         float64
	siteEffect       float64 // u_s
	noise            float64 // ε_i
	effect           float64 // θ_i
}

// draw draws every record from the process, site by site: the site's u_s
// and its assignment to coaching, then each participant's first_time,
// score, age and ε in that order.
func draw() []participant {
	rng := rand.New(rand.NewPCG(Seed, Seed))
	out := make([]participant, 0, Rows)
	regions := Regions()
	for s := range Sites {
		g := s / SitesPerRegion
		u := siteSD * rng.NormFloat64()
		perm := rng.Perm(PerSite)
		coached := make([]bool, PerSite)
		for _, j := range perm[:CoachedPerSite] {
			coached[j] = true
		}
		for j := range PerSite {
			p := participant{
				id:          fmt.Sprintf("P%04d", len(out)+1),
				site:        fmt.Sprintf("S%02d", s+1),
				region:      regions[g],
				regionIndex: g,
				coached:     coached[j],
				siteEffect:  u,
			}
			p.firstTime = rng.Float64() < pFirstTime
			p.score = math.Min(scoreMax, math.Max(scoreMin, roundTo(scoreMean+scoreSD*rng.NormFloat64(), 1)))
			p.age = ageMin + rng.IntN(ageMax-ageMin+1)
			p.noise = noiseSD * rng.NormFloat64()
			p.effect = effect(p.firstTime, g, p.score)
			y := earningsBase + ageSlope*(float64(p.age)-ageCentre) + scoreSlope*(p.score-scoreCentre) + u + p.noise
			if p.coached {
				y += p.effect
			}
			p.earnings = roundTo(y, 2)
			out = append(out, p)
		}
	}
	return out
}

// effect is θ, the effect of coaching on one participant.
func effect(firstTime bool, region int, score float64) float64 {
	th := effectBase + regionShift[region] + effectScoreSlope*(score-scoreCentre)
	if firstTime {
		th += effectFirstTime
	}
	return th
}

func roundTo(x float64, decimals int) float64 {
	f := math.Pow(10, float64(decimals))
	return math.Round(x*f) / f
}

// Workbook returns the demonstration workbook as .xlsx bytes. Its cell
// contents are the same on every call.
func Workbook() ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", SheetParticipants); err != nil {
		return nil, err
	}
	if err := writeParticipants(f, draw()); err != nil {
		return nil, fmt.Errorf("demo: sheet %q: %w", SheetParticipants, err)
	}
	if _, err := f.NewSheet(SheetNotes); err != nil {
		return nil, err
	}
	if err := writeNotes(f); err != nil {
		return nil, fmt.Errorf("demo: sheet %q: %w", SheetNotes, err)
	}
	if err := setProperties(f); err != nil {
		return nil, err
	}
	buf, err := f.WriteToBuffer()
	if err != nil {
		return nil, err
	}
	return patchErrorCells(buf.Bytes())
}

// setProperties names the workbook's author and program as Slopewise and
// fixes its dates, so that the bytes, not only the cells, repeat.
func setProperties(f *excelize.File) error {
	return setPropertiesOf(f, "Harbourline job-coaching pilot (invented demonstration data)")
}

// setPropertiesOf is setProperties with the workbook's title.
func setPropertiesOf(f *excelize.File, title string) error {
	const made = "2024-06-11T00:00:00Z"
	err := f.SetDocProps(&excelize.DocProperties{
		Creator:        "Slopewise",
		LastModifiedBy: "Slopewise",
		Title:          title,
		Description:    "Invented data drawn by Slopewise from a stated process with known effects; see the Notes sheet.",
		Created:        made,
		Modified:       made,
	})
	if err != nil {
		return err
	}
	return f.SetAppProps(&excelize.AppProperties{Application: "Slopewise"})
}

func writeParticipants(f *excelize.File, people []participant) error {
	values := make([][]any, len(people))
	for i, p := range people {
		values[i] = []any{p.id, p.site, p.region, yesNo(p.firstTime), p.score, p.age, zeroOne(p.coached), p.earnings}
	}
	messy := map[string]MessyCell{}
	for _, m := range MessyCells() {
		messy[m.Cell] = m
	}
	return writeTable(f, SheetParticipants, Title, Columns(), values, []float64{15, 7, 10, 11, 15, 6, 9, 13}, messy)
}

// writeTable writes a data sheet: the title in A1, the header in bold on
// HeaderRow, one row of values a record below it, the messy cells spoilt
// (writeMessy), the columns' widths, and the header frozen.
func writeTable(f *excelize.File, sh, title string, header []string, values [][]any, widths []float64, messy map[string]MessyCell) error {
	bold, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	if err != nil {
		return err
	}
	titleStyle, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true, Size: 13}})
	if err != nil {
		return err
	}
	if err := f.SetCellStr(sh, "A1", title); err != nil {
		return err
	}
	if err := f.SetCellStyle(sh, "A1", "A1", titleStyle); err != nil {
		return err
	}
	row := make([]any, len(header))
	for i, name := range header {
		row[i] = name
	}
	if err := f.SetSheetRow(sh, cellRef(0, HeaderRow), &row); err != nil {
		return err
	}
	if err := f.SetCellStyle(sh, cellRef(0, HeaderRow), cellRef(len(header)-1, HeaderRow), bold); err != nil {
		return err
	}
	for i, vs := range values {
		r := HeaderRow + 1 + i
		for c, v := range vs {
			ref := cellRef(c, r)
			if m, ok := messy[ref]; ok {
				if err := writeMessy(f, m); err != nil {
					return err
				}
				continue
			}
			if err := f.SetCellValue(sh, ref, v); err != nil {
				return err
			}
		}
	}
	for c, w := range widths {
		col, _ := excelize.ColumnNumberToName(c + 1)
		if err := f.SetColWidth(sh, col, col, w); err != nil {
			return err
		}
	}
	if err := f.SetSheetDimension(sh, "A1:"+cellRef(len(header)-1, HeaderRow+len(values))); err != nil {
		return err
	}
	return f.SetPanes(sh, &excelize.Panes{Freeze: true, YSplit: HeaderRow, TopLeftCell: cellRef(0, HeaderRow+1), ActivePane: "bottomLeft"})
}

// writeMessy writes a spoilt cell. A blank cell is left unwritten; the
// error cell gets its formula here and its error value from
// patchErrorCells, since excelize writes no error values.
func writeMessy(f *excelize.File, m MessyCell) error {
	switch m.Content {
	case ContentBlank:
		return nil
	case ContentDivByZero:
		return f.SetCellFormula(SheetParticipants, m.Cell, divByZeroFormula)
	default:
		return f.SetCellStr(SheetParticipants, m.Cell, m.Content)
	}
}

// patchErrorCells rewrites each #DIV/0! cell of the Participants sheet from
// <c r="E57" t="str"><f>1/0</f></c> to <c r="E57" t="e"><f>1/0</f><v>#DIV/0!</v></c>,
// the form a spreadsheet program saves, and copies every other part of the
// package unchanged.
func patchErrorCells(xlsx []byte) ([]byte, error) {
	zr, err := zip.NewReader(bytes.NewReader(xlsx), int64(len(xlsx)))
	if err != nil {
		return nil, err
	}
	var out bytes.Buffer
	zw := zip.NewWriter(&out)
	patched := false
	for _, part := range zr.File {
		if part.Name != participantsSheet {
			if err := zw.Copy(part); err != nil {
				return nil, err
			}
			continue
		}
		body, err := readPart(part)
		if err != nil {
			return nil, err
		}
		if body, err = setErrorValues(body); err != nil {
			return nil, err
		}
		w, err := zw.CreateHeader(&zip.FileHeader{Name: part.Name, Method: zip.Deflate, ModifiedTime: part.ModifiedTime, ModifiedDate: part.ModifiedDate})
		if err != nil {
			return nil, err
		}
		if _, err := w.Write(body); err != nil {
			return nil, err
		}
		patched = true
	}
	if !patched {
		return nil, fmt.Errorf("demo: the package has no part %s to patch", participantsSheet)
	}
	if err := zw.Close(); err != nil {
		return nil, err
	}
	return out.Bytes(), nil
}

func readPart(part *zip.File) ([]byte, error) {
	rc, err := part.Open()
	if err != nil {
		return nil, err
	}
	defer rc.Close()
	return io.ReadAll(rc)
}

// setErrorValues gives each #DIV/0! cell its error type and cached value;
// it fails unless every such cell is found exactly once.
func setErrorValues(sheet []byte) ([]byte, error) {
	for _, m := range MessyCells() {
		if m.Content != ContentDivByZero {
			continue
		}
		re := regexp.MustCompile(`<c r="` + m.Cell + `"((?: s="\d+")?)(?: t="\w+")?><f>` + regexp.QuoteMeta(divByZeroFormula) + `</f>(?:<v>[^<]*</v>)?</c>`)
		if n := len(re.FindAllIndex(sheet, -1)); n != 1 {
			return nil, fmt.Errorf("demo: found the formula cell %s %d times in %s, want once", m.Cell, n, participantsSheet)
		}
		sheet = re.ReplaceAll(sheet, []byte(`<c r="`+m.Cell+`"${1} t="e"><f>`+divByZeroFormula+`</f><v>`+ContentDivByZero+`</v></c>`))
	}
	return sheet, nil
}

func cellRef(col, row int) string {
	name, _ := excelize.ColumnNumberToName(col + 1)
	return name + strconv.Itoa(row)
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

func zeroOne(b bool) int {
	if b {
		return 1
	}
	return 0
}

// writeNotes writes the Notes sheet: one line of plain text a row in
// column A.
func writeNotes(f *excelize.File) error { return writeLines(f, notes()) }

// writeLines writes lines on the Notes sheet, one a row in column A; the
// first line and each after an empty one are headings, in bold.
func writeLines(f *excelize.File, lines []string) error {
	const sh = SheetNotes
	heading, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	if err != nil {
		return err
	}
	for i, line := range lines {
		ref := cellRef(0, i+1)
		if line == "" {
			continue
		}
		if err := f.SetCellStr(sh, ref, line); err != nil {
			return err
		}
		if i == 0 || lines[i-1] == "" {
			if err := f.SetCellStyle(sh, ref, ref, heading); err != nil {
				return err
			}
		}
	}
	if err := f.SetSheetDimension(sh, "A1:"+cellRef(0, len(lines))); err != nil {
		return err
	}
	return f.SetColWidth(sh, "A", "A", 120)
}

// notes is the text of the Notes sheet; an empty line separates sections,
// and the line after it is the section's heading.
func notes() []string {
	num := func(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }
	lines := []string{
		"Harbourline job-coaching pilot — notes",
		"These data are invented. Harbourline, its sites and its participants do not exist; Slopewise's own code drew every value from the process below so that the true effect of coaching is known.",
		"Each row of the sheet Participants is one participant; the column names are on row 3.",
		"",
		"Columns",
		"participant_id: the participant's reference, P0001 to P1200.",
		"site: the office the participant attended, S01 to S24, 50 participants each.",
		"region: the region of the site; six sites each in North (S01–S06), Harbour (S07–S12), Valley (S13–S18) and Plains (S19–S24).",
		"first_time: yes if the participant was looking for a job for the first time.",
		"baseline_score: score on a skills test at entry, 0 to 100.",
		"age: age in years at entry.",
		"coached: 1 if the participant was offered job coaching, 0 if not; 25 of the 50 at each site were chosen at random.",
		"earnings_6m: monthly earnings six months after entry.",
		"",
		"How the data were made",
		"first_time is yes with probability one half; baseline_score is drawn from a normal distribution with mean 50 and standard deviation 15, rounded to one decimal and kept within 0 to 100; age is a whole number from 18 to 64, each equally likely.",
		"Each site has its own level of earnings, drawn from a normal distribution with mean 0 and standard deviation 120; each participant has a further random part with standard deviation 350.",
		"earnings_6m = 2000 + 10 × (age − 35) + 6 × (baseline_score − 50) + site level + coached × coaching effect + random part, rounded to cents.",
		"coaching effect = 180, plus 140 for a first-time job seeker, plus 80 in Harbour, minus 60 in Valley, plus 20 in Plains (0 in North), plus 4 for each point of baseline_score above 50.",
		"",
		"True effects of coaching on earnings_6m (of the process; estimates from the 1,200 rows will differ by chance)",
	}
	byFirst := TrueEffects(ColFirstTime)
	for _, g := range []string{"no", "yes"} {
		lines = append(lines, fmt.Sprintf("first_time = %s: %s", g, num(byFirst[g])))
	}
	byRegion := TrueEffects(ColRegion)
	for _, g := range Regions() {
		lines = append(lines, fmt.Sprintf("region = %s: %s", g, num(byRegion[g])))
	}
	lines = append(lines,
		fmt.Sprintf("baseline_score = m: %s + %s × (m − %s); for example %s at 35 and %s at 65.",
			num(TrueEffectAt(scoreCentre)), num(effectScoreSlope), num(scoreCentre), num(TrueEffectAt(35)), num(TrueEffectAt(65))),
		"",
		"Messy cells, left on purpose to show how Slopewise reports them",
	)
	for _, m := range MessyCells() {
		lines = append(lines, fmt.Sprintf("%s (%s): %s", m.Cell, m.Column, describeContent(m.Content)))
	}
	return lines
}

func describeContent(content string) string {
	switch content {
	case ContentBlank:
		return "left blank"
	case ContentDivByZero:
		return "the error value #DIV/0! from the formula =1/0"
	default:
		return fmt.Sprintf("the text %q typed by hand", content)
	}
}
