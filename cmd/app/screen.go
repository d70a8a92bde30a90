package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

const screenUsage = `Usage: slopewise screen FILE --outcome COL --treatment COL --moderators A,B,C [options]

Tries several moderators, each in a model of its own (outcome = treatment +
moderator + treatment × moderator + controls), and adjusts the test that the
effect is the same in all of a moderator's groups for the number tried
(Holm; Benjamini–Hochberg). Writes one results sheet into FILE: a summary of
every moderator at the top, each moderator's own results below. Each
moderator's kind is detected from its column (text → category, two values →
binary, numbers → number).

Moderators:
  --moderators A,B,..      the columns to try, at least two
  --planned A,..           those named before looking at the data; the others
                           are exploratory, and the note reports them only
                           with their adjusted p-value

Every option of analyze but the moderator's own (--moderator,
--moderator-type, --reference, --moderator-values, --center) works here
too: --treated, --controls, --cluster, --grouping, --weights, --se,
--randomized, --alpha, --no-bootstrap, --draws, --seed,
--equivalence-margin, --sheet, --header-row, --table, --out, --copy-data,
--json, --dry-run, --replace. Run "slopewise help analyze" for what they do;
the grouping check looks at each moderator in turn.

Exit status: 0 done, 1 a problem with the data or the model (the message
names the moderator, column, sheet or cell), 2 a problem with the command
line.
`

// screenFlags are the options of the screen command.
type screenFlags struct {
	modelFlags
	moderators, planned string
}

// analyzeOnly are analyze's options about its one moderator.
var analyzeOnly = []string{"moderator", "moderator-type", "reference", "moderator-values", "center"}

// analyzeDesign are analyze's options of a before-and-after design.
var analyzeDesign = []string{"period", "after", "unit", "unit-effects", "control-arm"}

func parseScreen(args []string, stdout io.Writer) (*screenFlags, error) {
	for _, a := range args {
		name, _, _ := strings.Cut(strings.TrimLeft(a, "-"), "=")
		for _, only := range analyzeOnly {
			if strings.HasPrefix(a, "-") && name == only {
				return nil, usagef("--%s is an option of analyze, about its one moderator; screen takes --moderators A,B,C and detects each one's kind", only)
			}
		}
	}
	for _, a := range args {
		name, _, _ := strings.Cut(strings.TrimLeft(a, "-"), "=")
		for _, only := range analyzeDesign {
			if strings.HasPrefix(a, "-") && name == only {
				return nil, usagef("--%s is an option of analyze, for a before-and-after comparison or several arms; screen compares moderators of a single two-arm trial only", only)
			}
		}
	}
	var f screenFlags
	fs := newFlagSet("screen", screenUsage, stdout)
	f.register(fs)
	fs.StringVar(&f.moderators, "moderators", "", "")
	fs.StringVar(&f.planned, "planned", "", "")
	if err := f.parse(fs, args, "give the workbook to screen: slopewise screen FILE --outcome … --treatment … --moderators A,B,C"); err != nil {
		return nil, err
	}
	return &f, f.check()
}

// check rejects options that are missing or do not go together.
func (f *screenFlags) check() error {
	if err := f.checkRoles(); err != nil {
		return err
	}
	mods := splitList(f.moderators)
	if len(mods) < 2 {
		return usagef("--moderators needs at least two columns separated by commas (for one moderator use analyze)")
	}
	seen := map[string]bool{}
	for _, m := range mods {
		if seen[m] {
			return usagef("--moderators lists %q twice", m)
		}
		seen[m] = true
	}
	for _, p := range splitList(f.planned) {
		if !seen[p] {
			return usagef("--planned names %q, which is not among --moderators (%s)", p, strings.Join(mods, ", "))
		}
	}
	return f.modelFlags.check()
}

// screenRun turns the options and the table's columns into the screen.
func (f *screenFlags) screenRun(t *workbook.Table) (report.ScreenRun, error) {
	mods := splitList(f.moderators)
	base, err := f.baseSpec(t, mods...)
	if err != nil {
		return report.ScreenRun{}, err
	}
	sr := report.ScreenRun{Base: f.run()}
	sr.Base.Spec = base
	planned := map[string]bool{}
	for _, p := range splitList(f.planned) {
		planned[p] = true
	}
	for _, m := range mods {
		c := report.Candidate{Planned: planned[m]}
		c.Moderator.Column = m
		c.Moderator.Kind = pipeline.ModeratorKind(t.Column(m))
		sr.Candidates = append(sr.Candidates, c)
	}
	return sr, nil
}

func screen(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	f, err := parseScreen(args, stdout)
	if err != nil {
		return err
	}
	stopGuard := guardMemory(f.file)
	defer stopGuard()
	t, err := pipeline.Read(ctx, f.run(), nil)
	if err != nil {
		return err
	}
	sr, err := f.screenRun(t)
	if err != nil {
		return err
	}
	sr.Groupings = pipeline.ScreenGroupings(t, sr)
	if f.grouping == "refuse" {
		for i, c := range sr.Candidates {
			if err := f.refuseGrouped(fmt.Sprintf(" For the moderator %s:", c.Moderator.Column), sr.SpecFor(i), sr.Groupings[i]); err != nil {
				return err
			}
		}
	}
	a, err := pipeline.ScreenTable(ctx, sr, t, nil)
	if err != nil {
		return err
	}
	human := f.human(stdout, stderr)
	f.printNotices(human)
	for i, c := range sr.Candidates {
		printGrouping(human, fmt.Sprintf(" (moderator %s)", c.Moderator.Column), sr.SpecFor(i), sr.Groupings[i])
	}
	out := report.SummarizeScreen(a.Run, a.Screen)
	printScreenSummary(human, out)
	stopGuard() // for reading and fitting only, as in analyze
	if err := f.save(human, a.Save); err != nil {
		return err
	}
	if f.json {
		return printJSON(stdout, out)
	}
	return nil
}

// printScreenSummary writes the moderators compared for a terminal.
func printScreenSummary(w io.Writer, out report.ScreenOutput) {
	fmt.Fprintf(w, "%d moderators tried, each in its own model.\n\n", out.Tried)
	fmt.Fprintf(w, "  %-24s %-9s %10s %10s %10s %10s %12s\n", "moderator", "planned", "p", "Holm p", "BH q", "mdd", "largest")
	for _, m := range out.Moderators {
		p := "-"
		if h := m.Heterogeneity; h != nil {
			p = fmt.Sprintf("%.3g", h.P)
			if h.PBoot != nil {
				p = fmt.Sprintf("%.3g*", *h.PBoot)
			}
		}
		fmt.Fprintf(w, "  %-24s %-9v %10s %10.3g %10.3g %10.4g %12.4g\n", m.Moderator, m.Planned, p, m.PHolm, m.QBH, m.MDD, m.LargestDifference)
	}
	if out.Bootstrap != nil {
		fmt.Fprintln(w, "  * wild cluster bootstrap p-value")
	}
	fmt.Fprintf(w, "\n%s\n", out.Note)
}
