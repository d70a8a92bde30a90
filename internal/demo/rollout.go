package demo

// The second demonstration workbook: the "Harbourline coaching roll-out",
// an invented before-and-after study with two arms whose records are drawn
// by code from a stated process, so the true effect of each arm in every
// region is known (METHODS §10, §11).
//
// The programme reached half of Harbourline's 24 sites in its second year
// (2024): three of the six sites of each region, chosen at random. At those
// sites each participant was assigned at random to coaching or to
// coaching with a stipend; at the other sites nobody was offered either
// (the comparison, "none"). Every participant's monthly earnings were
// recorded in 2023, before the start, and in 2024. For participant i at
// site s in region g, in year t (0 for 2023, 1 for 2024):
//
//	v_s  ~ Normal(0, 100²)            a site's own level
//	a_i  ~ Normal(0, 300²)            a participant's own level
//	e_it ~ Normal(0, 150²)
//	earnings_it = round₂(1800 + v_s + a_i + 120·t + t·effect(arm_i, g) + e_it)
//	effect(coaching, g)            = 150 + q_g
//	effect(coaching + stipend, g)  = 150 + q_g + 120
//	effect(none, g)                = 0
//
// with q = {North: 0, Harbour: 100, Valley: −50, Plains: 50}. Every
// participant's earnings would have grown by 120 without the programme,
// in every region: the trends are parallel by construction, so the
// difference in differences of each arm in each region is its effect
// there (RolloutTrueEffects).

import (
	"fmt"
	"math/rand/v2"

	"github.com/xuri/excelize/v2"
)

// RolloutSeed seeds the PCG generator of the roll-out workbook. It is the
// first seed from 20261201 on whose draw puts every one of the eight true
// effects inside its 95% interval (clustered by person, as the Notes
// sheet's command fits it); about two draws in three do, as eight
// intervals at 95% should. A demonstration whose estimate misses its
// truth by chance would teach the wrong lesson on first sight; the
// intervals' coverage itself is what the R checks and the process vouch
// for, not this draw.
const RolloutSeed uint64 = 20261206

// The roll-out's sample and layout.
const (
	RolloutPerSite = 20 // participants at each site, each with two rows
	RolloutRows    = Sites * RolloutPerSite * 2
	SheetRollout   = "Earnings"
	// RolloutTitle is the text of cell A1 of the Earnings sheet.
	RolloutTitle = "Harbourline coaching roll-out — earnings before and after (invented demonstration data)"
	// RolloutFile is the name `slopewise demo` writes it under.
	RolloutFile = "slopewise-demo-rollout.xlsx"
)

// The roll-out's columns, in sheet order (A to F).
const (
	ColPerson    = "person_id"
	ColYear      = "year"
	ColProgramme = "programme"
	ColEarnings2 = "earnings"
)

// The programme's arms: the comparison and the two versions.
const (
	ArmNone     = "none"
	ArmCoaching = "coaching"
	ArmStipend  = "coaching + stipend"
)

// RolloutColumns returns the roll-out's column names in sheet order.
func RolloutColumns() []string {
	return []string{ColPerson, ColSite, ColRegion, ColYear, ColProgramme, ColEarnings2}
}

// The roll-out's process; the comment above states it as formulas.
const (
	rolloutBase    = 1800.0
	rolloutSiteSD  = 100.0
	rolloutOwnSD   = 300.0
	rolloutNoiseSD = 150.0
	rolloutGrowth  = 120.0
	coachingBase   = 150.0
	stipendExtra   = 120.0
)

// rolloutShift is q_g, in the order of Regions.
var rolloutShift = [...]float64{0, 100, -50, 50}

// RolloutTrueEffects gives the true effect of each arm in each region, the
// difference in differences of the process: arm → region → effect.
func RolloutTrueEffects() map[string]map[string]float64 {
	out := map[string]map[string]float64{ArmCoaching: {}, ArmStipend: {}}
	for g, r := range Regions() {
		out[ArmCoaching][r] = coachingBase + rolloutShift[g]
		out[ArmStipend][r] = coachingBase + rolloutShift[g] + stipendExtra
	}
	return out
}

// rolloutRow is one row of the roll-out sheet.
type rolloutRow struct {
	person, site, region, arm string
	year                      int
	earnings                  float64
}

// drawRollout draws the roll-out site by site: which sites of each region
// get the programme, then each site's level, the arms of its participants
// and each participant's own level and two years.
func drawRollout() []rolloutRow { return drawRolloutSeed(RolloutSeed) }

// drawRolloutSeed is drawRollout from a given seed.
func drawRolloutSeed(seed uint64) []rolloutRow {
	rng := rand.New(rand.NewPCG(seed, seed))
	effects := RolloutTrueEffects()
	regions := Regions()
	programme := make([]bool, Sites)
	for g := range regions {
		for _, j := range rng.Perm(SitesPerRegion)[:SitesPerRegion/2] {
			programme[g*SitesPerRegion+j] = true
		}
	}
	out := make([]rolloutRow, 0, RolloutRows)
	for s := range Sites {
		g := s / SitesPerRegion
		v := rolloutSiteSD * rng.NormFloat64()
		arms := make([]string, RolloutPerSite)
		for j := range arms {
			arms[j] = ArmNone
		}
		if programme[s] {
			perm := rng.Perm(RolloutPerSite)
			for k, j := range perm {
				arms[j] = ArmCoaching
				if k < RolloutPerSite/2 {
					arms[j] = ArmStipend
				}
			}
		}
		for j := range RolloutPerSite {
			own := rolloutOwnSD * rng.NormFloat64()
			person := fmt.Sprintf("R%04d", s*RolloutPerSite+j+1)
			for t := range 2 {
				y := rolloutBase + v + own + rolloutGrowth*float64(t) + rolloutNoiseSD*rng.NormFloat64()
				if t == 1 && arms[j] != ArmNone {
					y += effects[arms[j]][regions[g]]
				}
				out = append(out, rolloutRow{person: person, site: fmt.Sprintf("S%02d", s+1), region: regions[g],
					arm: arms[j], year: 2023 + t, earnings: roundTo(y, 2)})
			}
		}
	}
	return out
}

// RolloutWorkbook returns the roll-out workbook as .xlsx bytes, the same
// on every call.
func RolloutWorkbook() ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", SheetRollout); err != nil {
		return nil, err
	}
	rows := drawRollout()
	values := make([][]any, len(rows))
	for i, r := range rows {
		values[i] = []any{r.person, r.site, r.region, r.year, r.arm, r.earnings}
	}
	if err := writeTable(f, SheetRollout, RolloutTitle, RolloutColumns(), values, []float64{11, 7, 10, 7, 20, 11}, nil); err != nil {
		return nil, fmt.Errorf("demo: sheet %q: %w", SheetRollout, err)
	}
	if _, err := f.NewSheet(SheetNotes); err != nil {
		return nil, err
	}
	if err := writeLines(f, rolloutNotes()); err != nil {
		return nil, fmt.Errorf("demo: sheet %q: %w", SheetNotes, err)
	}
	if err := setPropertiesOf(f, "Harbourline coaching roll-out (invented demonstration data)"); err != nil {
		return nil, err
	}
	buf, err := f.WriteToBuffer()
	if err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// RolloutCommand is the analysis the Notes sheet suggests.
const RolloutCommand = `slopewise analyze slopewise-demo-rollout.xlsx --outcome earnings --treatment programme --control-arm none --period year --after 2024 --unit person_id --unit-effects --moderator region --randomized`

// rolloutNotes is the text of the roll-out's Notes sheet.
func rolloutNotes() []string {
	lines := []string{
		"Harbourline coaching roll-out — notes",
		"These data are invented. Harbourline, its sites and its participants do not exist; Slopewise's own code drew every value from the process below so that the true effects are known.",
		"Each row of the sheet Earnings is one participant in one year; the column names are on row 3.",
		"",
		"The story",
		"In 2024 the programme reached half of the 24 sites: three of the six in each region, chosen at random. At those sites each participant was assigned at random to coaching or to coaching with a stipend; at the others nobody was offered either. Earnings were recorded for every participant in 2023, before the start, and in 2024.",
		"",
		"Columns",
		"person_id: the participant, R0001 to R0480, two rows each.",
		"site and region: as in the pilot workbook; 20 participants a site.",
		"year: 2023 (before the start) or 2024 (after).",
		"programme: none, coaching, or coaching + stipend — the arm the participant was assigned to (in both years; it started in 2024).",
		"earnings: monthly earnings that year.",
		"",
		"How the data were made",
		"earnings = 1800 + site level (standard deviation 100) + participant's own level (standard deviation 300) + 120 in 2024 + in 2024 the arm's effect + a random part (standard deviation 150), rounded to cents.",
		"Without the programme everyone's earnings would have grown by 120 from 2023 to 2024, in every region: the trends are parallel by construction.",
		"A site's level is the same in both years, so it drops out of each participant's change; the changes of two participants of one site are otherwise unrelated, which is why the suggested analysis clusters by participant (the unit).",
		"",
		"True effects on earnings in 2024 (of the process; estimates will differ by chance)",
	}
	effects := RolloutTrueEffects()
	for _, arm := range []string{ArmCoaching, ArmStipend} {
		for _, r := range Regions() {
			lines = append(lines, fmt.Sprintf("%s, region = %s: %g", arm, r, effects[arm][r]))
		}
	}
	return append(lines, "", "To analyse", RolloutCommand)
}
