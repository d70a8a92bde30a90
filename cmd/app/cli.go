package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"slopewise/assets"
	demodata "slopewise/internal/demo"
	"slopewise/internal/estimate"
	"slopewise/internal/io/workbook"
	"slopewise/internal/pipeline"
	"slopewise/internal/report"
)

// Exit codes of the headless commands.
const (
	exitOK    = 0
	exitData  = 1 // the data or the model: a plain message names the column, sheet or cell
	exitUsage = 2 // the command line
)

const usageText = `Slopewise — does the programme work equally well for everyone?

Usage:
  slopewise                      open the window
  slopewise FILE                 open the window with a workbook
  slopewise analyze FILE [options]
                                 fit the model and write a results sheet into FILE
  slopewise screen FILE [options]
                                 try several moderators, adjusted for how many
  slopewise demo DIR             write the demonstration workbooks into DIR
  slopewise version              print the version
  slopewise help [COMMAND]       this help, or a command's

Run "slopewise help analyze" or "slopewise help screen" for the options.
`

const analyzeUsage = `Usage: slopewise analyze FILE --outcome COL --treatment COL --moderator COL [options]

Fits outcome = treatment + moderator + treatment × moderator + controls, and
writes a results sheet into FILE (a .xlsx or .xlsm workbook; for a .csv, .tsv
or .txt file, a new workbook "<name> results.xlsx" beside it). FILE itself is
never damaged: the save is checked and a backup kept.

Roles:
  --outcome COL            the result measured for each row
  --treatment COL          who received the programme: 0/1, two labels, or an amount
  --treated LABEL          the label that means treated, for a treatment of two labels
  --control-arm LABEL      the comparison arm, for a treatment of several arms
                           (a waiting list beside coaching and coaching with a
                           stipend): each other arm's effect is reported in
                           every group, with its own test that it is the same
                           in all groups (Holm-adjusted over the arms) and a
                           joint test
  --moderator COL          the column whose groups or values are compared
  --moderator-type T       binary, category or number (detected when left out:
                           text → category, two values → binary, numbers → number)
  --reference LEVEL        the comparison group of a category moderator
  --moderator-values V,..  values of a number moderator at which to report the
                           effect (default: its 10th, 25th, 50th, 75th, 90th percentiles)
  --center V               subtract V from a number moderator before fitting
  --controls A,B,..        other columns to adjust for
  --cluster COL            rows of the same value are alike (sites, classes)
  --grouping warn|refuse   what to do when the data show that the rows come
                           in groups that --cluster does not allow for: a
                           column holds the moderator or the treatment
                           constant within each of its values (every row of
                           a site has the same region), or repeats units (an
                           identifier with several rows each). warn (the
                           default) prints the finding and keeps it in the
                           results' cautions; refuse stops with exit status 1
                           before fitting, for scripts that must not run
                           without the right cluster
  --weights COL            a weight for each row (sampling or precision weights)

Before and after (a difference in differences by group):
  --period COL             whether a row was measured before (0) or after (1) the
                           programme started; the treatment then marks the units
                           that get the programme, and each group's effect is
                           how much more the outcome changed in them than in the
                           comparison units. It is the programme's effect only if,
                           without it, both would have moved in parallel
  --after VALUE            the value of --period that means after the start, when
                           the column holds two labels or other numbers (2023,
                           2024); with more periods, the first one after the
                           start: the earlier ones before the last one before
                           the start (the leads) then show whether the two sets
                           of units moved in parallel before it
  --unit COL               the person or site each row belongs to, measured more
                           than once; standard errors are clustered by it unless
                           --cluster names a coarser group or --se says otherwise
  --unit-effects           compare each unit with itself: take out each unit's own
                           level; terms that do not change within a unit (the
                           treated group, a moderator of the unit) drop out and
                           are named

Options:
  --se TYPE                standard errors: classical, hc0, hc1, hc2, hc3, cluster
                           (default hc3, or cluster when --cluster is given)
  --randomized             the treatment was randomly assigned (the note then
                           speaks of effects rather than associations)
  --planned                the moderator was named before looking at the data
  --alpha A                significance level (default 0.05: 95% intervals)
  --no-bootstrap           do not run the wild cluster bootstrap, which otherwise
                           runs when --cluster has fewer than 42 clusters and
                           gives the p-values and intervals the note relies on
  --draws B                bootstrap draws (default 9999; when every possible
                           draw fits in B, each is used once instead)
  --seed N                 seed of the bootstrap draws (default 0); the same
                           seed gives the same answer
  --equivalence-margin D   the smallest difference between groups that matters,
                           in the outcome's units (for a 0/1 outcome, a
                           proportion: 0.05 for 5 percentage points); the note
                           then says whether two one-sided tests show the
                           effect to be the same to within D
  --sheet NAME             the sheet to read (default: the first)
  --header-row N           the row holding the column names (default: found)
  --table NAME             read only this table of the workbook (a named
                           table with a header row), leaving out its totals
                           row; the sheet that holds it is found
  --out PATH               write the results into a copy at PATH instead
  --copy-data auto|yes|no  for a .csv, .tsv or .txt file: copy its data into
                           the results workbook too (auto, the default: when
                           the file has at most 100,000 rows)
  --json                   also print the results as JSON on standard output
  --dry-run                fit and report, but write nothing
  --replace                replace Slopewise's own earlier results (its last
                           results sheet, or the results workbook beside a
                           text file) instead of refusing or adding another;
                           a backup is kept as always

Exit status: 0 done, 1 a problem with the data or the model (the message
names the column, sheet or cell), 2 a problem with the command line.
`

const demoUsage = `Usage: slopewise demo DIR

Writes the demonstration workbooks into DIR, created if needed: an invented
job-coaching pilot with known true effects, slopewise-demo.xlsx, and its
roll-out, slopewise-demo-rollout.xlsx: earnings of the same people before
and after the programme reached half of the sites, in two arms (coaching,
coaching with a stipend), with known true effects by region.
`

// usageError is a problem with the command line.
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return usageError{fmt.Sprintf(format, args...)} }

// cli runs a headless command and returns its exit code. A panic of the
// command's own goroutine is an internal error, reported in one line with
// exit status 1, never as the command line's 2.
func cli(ctx context.Context, args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "slopewise: an internal error stopped the command (%s). The workbook is as it was, or, if the results had been written, holds them with a backup beside it. Please report this, with the file if you can.\n", readable(fmt.Sprint(r)))
			code = exitData
		}
	}()
	if len(args) == 0 {
		fmt.Fprint(stderr, usageText)
		return exitUsage
	}
	var err error
	switch args[0] {
	case "analyze":
		err = analyze(ctx, args[1:], stdout, stderr)
	case "screen":
		err = screen(ctx, args[1:], stdout, stderr)
	case "demo":
		err = demo(args[1:], stdout)
	case "version", "--version":
		fmt.Fprintln(stdout, "slopewise", version)
		return exitOK
	case "help", "--help", "-h", "-help":
		topic := ""
		if len(args) > 1 {
			topic = args[1]
		}
		switch topic {
		case "analyze":
			fmt.Fprint(stdout, analyzeUsage)
		case "screen":
			fmt.Fprint(stdout, screenUsage)
		case "demo":
			fmt.Fprint(stdout, demoUsage)
		case "":
			fmt.Fprint(stdout, usageText)
		default:
			fmt.Fprintf(stderr, "slopewise: there is no command %q.\n\n%s", topic, usageText)
			return exitUsage
		}
		return exitOK
	default:
		fmt.Fprintf(stderr, "slopewise: there is no command %q.\n\n%s", args[0], usageText)
		return exitUsage
	}
	var ue usageError
	switch {
	case err == nil:
		return exitOK
	case errors.Is(err, flag.ErrHelp):
		return exitOK
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "slopewise: %s\nRun \"slopewise help %s\" for the options.\n", readable(ue.msg), args[0])
		return exitUsage
	}
	fmt.Fprintf(stderr, "slopewise: %s\n", readable(err.Error()))
	return exitData
}

// maxMessage bounds a message printed: every message names what is wrong
// in a sentence or two, and a value it quotes from the data is already
// short; this is the last guard against a cell's text of megabytes.
const maxMessage = 2000

func readable(msg string) string {
	if len(msg) <= maxMessage {
		return msg
	}
	cut := maxMessage
	for cut > 0 && !utf8.RuneStart(msg[cut]) {
		cut--
	}
	return msg[:cut] + fmt.Sprintf("… (%d more bytes)", len(msg)-cut)
}

// modelFlags are the options analyze and screen share: the roles other
// than the moderator, the standard errors, the bootstrap and the output.
type modelFlags struct {
	file                        string
	outcome, treatment, treated string
	controls, cluster, weights  string
	se, sheet, out, table       string
	copyData                    string
	randomized, json, dryRun    bool
	replace                     bool
	alpha                       float64
	headerRow                   int
	noBootstrap                 bool
	notices                     []string // options accepted that change nothing, said once
	draws                       int
	seed                        uint64
	margin                      float64
	grouping                    string // warn or refuse
	// A before-and-after design (analyze only): the period column, the
	// value after the start, the unit column and its effects.
	period, after, unit string
	unitEffects         bool
	// controlArm names the comparison arm of a treatment of several arms.
	controlArm string
	// set holds the names of the options given on the command line.
	set map[string]bool
}

// newFlagSet is a command's options, quiet on errors (cli reports them)
// and printing usage for -h.
func newFlagSet(name, usage string, stdout io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() { fmt.Fprint(stdout, usage) }
	return fs
}

func (f *modelFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.outcome, "outcome", "", "")
	fs.StringVar(&f.treatment, "treatment", "", "")
	fs.StringVar(&f.treated, "treated", "", "")
	fs.StringVar(&f.controls, "controls", "", "")
	fs.StringVar(&f.cluster, "cluster", "", "")
	fs.StringVar(&f.weights, "weights", "", "")
	fs.StringVar(&f.se, "se", "", "")
	fs.StringVar(&f.sheet, "sheet", "", "")
	fs.StringVar(&f.out, "out", "", "")
	fs.StringVar(&f.copyData, "copy-data", "auto", "")
	fs.BoolVar(&f.randomized, "randomized", false, "")
	fs.BoolVar(&f.json, "json", false, "")
	fs.BoolVar(&f.dryRun, "dry-run", false, "")
	fs.BoolVar(&f.replace, "replace", false, "")
	fs.Float64Var(&f.alpha, "alpha", 0.05, "")
	fs.IntVar(&f.headerRow, "header-row", 0, "")
	fs.StringVar(&f.table, "table", "", "")
	fs.BoolVar(&f.noBootstrap, "no-bootstrap", false, "")
	fs.IntVar(&f.draws, "draws", 0, "")
	fs.Uint64Var(&f.seed, "seed", 0, "")
	fs.Float64Var(&f.margin, "equivalence-margin", 0, "")
	fs.StringVar(&f.grouping, "grouping", "warn", "")
}

// parse reads the command line into fs, the file coming before or after
// the options; noFile is the message when no file is given.
func (f *modelFlags) parse(fs *flag.FlagSet, args []string, noFile string) error {
	var positional []string
	for len(args) > 0 {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.Usage()
				return err
			}
			return usageError{err.Error()}
		}
		args = fs.Args()
		if len(args) > 0 {
			positional = append(positional, args[0])
			args = args[1:]
		}
	}
	f.set = map[string]bool{}
	fs.Visit(func(fl *flag.Flag) { f.set[fl.Name] = true })
	switch len(positional) {
	case 0:
		return usagef("%s", noFile)
	case 1:
		f.file = positional[0]
	default:
		return usagef("one file at a time, but %d were given (%s)", len(positional), strings.Join(positional, ", "))
	}
	return nil
}

// analyzeFlags are the options of the analyze command.
type analyzeFlags struct {
	modelFlags
	moderator, moderatorType, ref string
	values, center                string
	planned                       bool
}

func parseAnalyze(args []string, stdout io.Writer) (*analyzeFlags, error) {
	var f analyzeFlags
	fs := newFlagSet("analyze", analyzeUsage, stdout)
	f.register(fs)
	fs.StringVar(&f.moderator, "moderator", "", "")
	fs.StringVar(&f.moderatorType, "moderator-type", "", "")
	fs.StringVar(&f.ref, "reference", "", "")
	fs.StringVar(&f.values, "moderator-values", "", "")
	fs.StringVar(&f.center, "center", "", "")
	fs.BoolVar(&f.planned, "planned", false, "")
	fs.StringVar(&f.period, "period", "", "")
	fs.StringVar(&f.after, "after", "", "")
	fs.StringVar(&f.unit, "unit", "", "")
	fs.BoolVar(&f.unitEffects, "unit-effects", false, "")
	fs.StringVar(&f.controlArm, "control-arm", "", "")
	if err := f.parse(fs, args, "give the workbook to analyze: slopewise analyze FILE --outcome … --treatment … --moderator …"); err != nil {
		return nil, err
	}
	return &f, f.check()
}

// check rejects options that are missing or do not go together.
func (f *analyzeFlags) check() error {
	if err := f.checkRoles(); err != nil {
		return err
	}
	if f.moderator == "" {
		return usagef("--moderator is required")
	}
	switch f.moderatorType {
	case "", "binary", "category", "number":
	default:
		return usagef("--moderator-type must be binary, category or number, not %q", f.moderatorType)
	}
	if f.ref != "" && f.moderatorType == "number" {
		return usagef("--reference names a group, so it cannot go with --moderator-type number")
	}
	if (f.values != "" || f.center != "") && (f.moderatorType == "binary" || f.moderatorType == "category" || f.ref != "") {
		return usagef("--moderator-values and --center are for a number moderator; they cannot go with groups (--moderator-type %s or --reference)", orText(f.moderatorType, "category"))
	}
	if f.after != "" && f.period == "" {
		return usagef("--after names the value of the period column after the start, so it needs --period COL")
	}
	if f.controlArm != "" && f.treated != "" {
		return usagef("--control-arm names the comparison arm of a treatment of several arms, and --treated the treated label of two; give one of them")
	}
	if f.unitEffects && f.unit == "" {
		return usagef("--unit-effects needs --unit COL, the column that names each person or site whose rows are repeated")
	}
	if _, err := f.probeValues(); err != nil {
		return err
	}
	if _, err := f.centre(); err != nil {
		return err
	}
	return f.modelFlags.check()
}

// checkRoles insists on the roles every model needs.
func (f *modelFlags) checkRoles() error {
	for _, req := range []struct{ name, v string }{{"outcome", f.outcome}, {"treatment", f.treatment}} {
		if req.v == "" {
			return usagef("--%s is required", req.name)
		}
	}
	return nil
}

// check rejects shared options that do not go together.
func (f *modelFlags) check() error {
	switch f.se {
	case "", "classical", "hc0", "hc1", "hc2", "hc3", "cluster":
	default:
		return usagef("--se must be classical, hc0, hc1, hc2, hc3 or cluster, not %q", f.se)
	}
	if f.se == "cluster" && f.clusterColumn() == "" {
		return usagef("--se cluster needs --cluster COL, the column that names each cluster")
	}
	if f.cluster != "" && f.se != "" && f.se != "cluster" {
		return usagef("--cluster is given but --se %s ignores it; use --se cluster, or leave out --cluster", f.se)
	}
	if !(f.alpha > 0 && f.alpha < 0.5) {
		return usagef("--alpha must be between 0 and 0.5 (the usual choice is 0.05), not %g", f.alpha)
	}
	if f.headerRow < 0 {
		return usagef("--header-row must be a row number, 1 or more, not %d", f.headerRow)
	}
	if f.table != "" && f.headerRow > 0 {
		return usagef("--table reads the table's own header row, so --header-row has no effect; leave one of them out")
	}
	if f.out != "" && workbook.IsTextName(f.out) {
		return usagef("--out must name an Excel workbook (.xlsx), since the results are a workbook; %q has a text file's extension", readable(f.out))
	}
	if f.dryRun && f.out != "" {
		return usagef("--dry-run writes nothing, so --out has no effect; leave one of them out")
	}
	if _, ok := copyDataChoices[f.copyData]; !ok {
		return usagef("--copy-data must be auto, yes or no, not %q", f.copyData)
	}
	if f.grouping != "warn" && f.grouping != "refuse" {
		return usagef("--grouping must be warn or refuse, not %q", f.grouping)
	}
	if f.set["equivalence-margin"] && !(f.margin > 0 && !math.IsInf(f.margin, 0)) {
		return usagef("--equivalence-margin must be a positive number in the outcome's units, not %g", f.margin)
	}
	return f.checkBootstrap()
}

// checkBootstrap rejects bootstrap options with values it cannot take;
// options that change nothing here (the bootstrap's without --cluster,
// --draws and --seed with --no-bootstrap) are accepted, so that a script
// may pass them for every file, and noted in one line.
func (f *modelFlags) checkBootstrap() error {
	var idle []string
	for _, name := range []string{"no-bootstrap", "draws", "seed"} {
		if f.set[name] && (f.clusterColumn() == "" || name != "no-bootstrap" && f.noBootstrap) {
			idle = append(idle, "--"+name)
		}
	}
	if len(idle) > 0 {
		why := "there is no --cluster, and the wild cluster bootstrap runs only with clusters"
		if f.clusterColumn() != "" {
			why = "--no-bootstrap is given"
		}
		verb := "changes"
		if len(idle) > 1 {
			verb = "change"
		}
		f.notices = append(f.notices, fmt.Sprintf("%s %s nothing here: %s.", strings.Join(idle, " and "), verb, why))
	}
	if f.set["draws"] && (f.draws < 99 || f.draws > estimate.MaxDraws) {
		return usagef("--draws must be a whole number from 99 to %d (the usual choice is %d), not %d", estimate.MaxDraws, estimate.DefaultDraws, f.draws)
	}
	return nil
}

// clusterColumn is the column the errors are clustered by: --cluster,
// or else --unit unless --se chooses errors that are not clustered
// (rows of one unit are alike; Bertrand, Duflo & Mullainathan 2004).
func (f *modelFlags) clusterColumn() string {
	if f.cluster == "" && (f.se == "" || f.se == "cluster") {
		return f.unit
	}
	return f.cluster
}

func orText(s, alt string) string {
	if s == "" {
		return alt
	}
	return s
}

func (f *analyzeFlags) probeValues() ([]float64, error) {
	if f.values == "" {
		return nil, nil
	}
	var out []float64
	for _, s := range strings.Split(f.values, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, usagef("--moderator-values must be numbers separated by commas; %q is not a number", readable(s))
		}
		out = append(out, v)
	}
	return out, nil
}

func (f *analyzeFlags) centre() (*float64, error) {
	if f.center == "" {
		return nil, nil
	}
	v, err := strconv.ParseFloat(f.center, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return nil, usagef("--center must be a number, not %q", readable(f.center))
	}
	return &v, nil
}

func splitList(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ",") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

var seTypes = map[string]estimate.VarianceType{
	"classical": estimate.Classical, "hc0": estimate.HC0, "hc1": estimate.HC1,
	"hc2": estimate.HC2, "hc3": estimate.HC3, "cluster": estimate.CR1,
}

// spec turns the options and the table's columns into the run's spec.
func (f *analyzeFlags) spec(t *workbook.Table) (estimate.Spec, error) {
	s, err := f.baseSpec(t, f.moderator)
	if err != nil {
		return s, err
	}
	m := estimate.Moderator{Column: f.moderator, Reference: f.ref}
	switch {
	case f.moderatorType == "binary":
		m.Kind = estimate.ModeratorBinary
	case f.moderatorType == "category" || (f.ref != "" && f.moderatorType == ""):
		m.Kind = estimate.ModeratorCategorical
	case f.moderatorType == "number" || f.values != "" || f.center != "":
		m.Kind = estimate.ModeratorContinuous
	default:
		m.Kind = pipeline.ModeratorKind(t.Column(f.moderator))
	}
	m.Probes, _ = f.probeValues()
	m.Centre, _ = f.centre()
	s.Moderator = m
	return s, nil
}

// baseSpec is the spec without its moderator, after checking that every
// column named, the moderators included, is in the table.
func (f *modelFlags) baseSpec(t *workbook.Table, moderators ...string) (estimate.Spec, error) {
	names := append([]string{f.outcome, f.treatment, f.period}, moderators...)
	for _, name := range append(append(names, f.cluster, f.unit, f.weights), splitList(f.controls)...) {
		if name != "" && t.Column(name) == nil {
			return estimate.Spec{}, missingColumn(t, name)
		}
	}
	s := estimate.Spec{
		Outcome:           f.outcome,
		Controls:          splitList(f.controls),
		Cluster:           f.clusterColumn(),
		Weights:           f.weights,
		Period:            f.period,
		After:             f.after,
		Unit:              f.unit,
		UnitEffects:       f.unitEffects,
		Variance:          seTypes[f.se],
		Alpha:             f.alpha,
		Bootstrap:         estimate.Bootstrap{Off: f.noBootstrap, Draws: f.draws, Seed: f.seed},
		EquivalenceMargin: f.margin,
	}
	s.Treatment = estimate.Treatment{Column: f.treatment, Treated: f.treated,
		Kind: pipeline.TreatmentKind(t.Column(f.treatment), f.treated)}
	if f.controlArm != "" {
		s.Treatment = estimate.Treatment{Column: f.treatment, Kind: estimate.TreatmentArms, Control: f.controlArm}
	}
	if s.Treatment.Kind == estimate.TreatmentLabels && f.treated == "" && len(t.Column(f.treatment).Levels) > 2 {
		return s, fmt.Errorf("the treatment %q holds %d arms (%s); name the comparison arm with --control-arm LABEL", f.treatment, len(t.Column(f.treatment).Levels), strings.Join(pipeline.ValuesOf(t.Column(f.treatment), 8), ", "))
	}
	if s.Treatment.Kind == estimate.TreatmentLabels && f.treated == "" {
		return s, fmt.Errorf("the treatment %q holds labels (%s); say which one means treated with --treated LABEL", f.treatment, strings.Join(t.Column(f.treatment).Levels, ", "))
	}
	if p := t.Column(f.period); p != nil && f.after == "" && !pipeline.ZeroOne(p) {
		return s, fmt.Errorf("the period column %q holds %s; say which one means after the programme started with --after VALUE", f.period, strings.Join(pipeline.ValuesOf(p, 8), ", "))
	}
	return s, nil
}

// run is the run's file, sheet and facts, before its spec is known.
func (f *modelFlags) run() report.Run {
	return report.Run{File: f.file, Sheet: f.sheet, HeaderRow: f.headerRow, Table: f.table, Randomized: f.randomized, Version: version, Time: time.Now()}
}

// printNotices says which options changed nothing.
func (f *modelFlags) printNotices(w io.Writer) {
	for _, n := range f.notices {
		fmt.Fprintln(w, "Note: "+n)
	}
}

// human is where the readable summary goes: standard error when standard
// output carries the JSON.
func (f *modelFlags) human(stdout, stderr io.Writer) io.Writer {
	if f.json {
		return stderr
	}
	return stdout
}

// save writes the results sheet unless this is a dry run, and says where.
func (f *modelFlags) save(human io.Writer, save func(workbook.WriteOptions) (*workbook.Written, error)) error {
	if f.dryRun {
		fmt.Fprintln(human, "\nDry run: nothing was written.")
		return nil
	}
	w, err := save(workbook.WriteOptions{CopyTo: f.out, CopyData: copyDataChoices[f.copyData], Replace: f.replace})
	if err != nil {
		return err
	}
	fmt.Fprintf(human, "\nResults written to %s, sheet %q.\n", w.Path, w.Sheet)
	if w.DataNotCopied > 0 {
		fmt.Fprintf(human, "The data stay in %s only: at more than 100,000 rows a copy in the workbook would be slow to open (--copy-data yes copies them).\n", f.file)
	}
	if w.Backup != "" {
		fmt.Fprintf(human, "The file as it was before is kept as %s.\n", w.Backup)
	}
	for _, l := range w.Lost {
		fmt.Fprintf(human, "Not kept in the copy: %s\n", l)
	}
	for _, n := range w.Notes {
		fmt.Fprintf(human, "Note: %s.\n", n)
	}
	if len(w.Cleaned) > 0 {
		fmt.Fprintf(human, "Removed %d leftover temporary file(s) of earlier saves that were stopped: %s\n", len(w.Cleaned), strings.Join(w.Cleaned, ", "))
	}
	return nil
}

// copyDataChoices are the values of --copy-data.
var copyDataChoices = map[string]workbook.CopyData{"auto": workbook.CopyDataAuto, "yes": workbook.CopyDataAlways, "no": workbook.CopyDataNever}

// printJSON writes v as indented JSON.
func printJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

func missingColumn(t *workbook.Table, name string) error {
	var names []string
	for _, c := range t.Columns {
		names = append(names, fmt.Sprintf("%q", c.Name))
	}
	place := t.Path
	if t.Sheet != "" {
		place = fmt.Sprintf("%s, sheet %q", t.Path, t.Sheet)
	}
	return fmt.Errorf("%s has no column %q; its columns are %s (names are read from row %d)", place, name, strings.Join(names, ", "), t.HeaderRow)
}

func analyze(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	f, err := parseAnalyze(args, stdout)
	if err != nil {
		return err
	}
	stopGuard := guardMemory(f.file)
	defer stopGuard()
	run := f.run()
	run.Planned = f.planned
	src, err := pipeline.Open(ctx, run)
	if err != nil {
		return err
	}
	defer src.Close()
	if run.Spec, err = f.spec(src.Outline()); err != nil {
		return err
	}
	if f.grouping == "refuse" {
		gs, err := src.Groupings(ctx, run.Spec)
		if err != nil {
			return err
		}
		if err := f.refuseGrouped("", run.Spec, gs); err != nil {
			return err
		}
	}
	a, err := src.Analyze(ctx, run)
	if err != nil {
		return err
	}
	human := f.human(stdout, stderr)
	f.printNotices(human)
	printGrouping(human, "", a.Run.Spec, a.Run.Groupings)
	printSummary(human, a)
	// The guard is for reading and fitting: ended in the middle of a save
	// it would leave its temporary files and say nothing was changed.
	stopGuard()
	if err := f.save(human, a.Save); err != nil {
		return err
	}
	if f.json {
		return printJSON(stdout, report.Summarize(a.Run, a.Result))
	}
	return nil
}

// refuseGrouped is the refusal of --grouping refuse when the grouping
// check warns; which names the moderator, for screen.
func (f *modelFlags) refuseGrouped(which string, spec estimate.Spec, gs []report.Grouping) error {
	col, words := report.GroupingWarning(spec, gs)
	if words == "" {
		return nil
	}
	return fmt.Errorf("%s: the rows come in groups that the standard errors would not allow for, and --grouping refuse stops here.%s %s Give --cluster %s, or --grouping warn to run with this warning.", f.file, which, words, col)
}

// printGrouping prints the grouping check's warning, if any; which names
// the moderator, for screen.
func printGrouping(w io.Writer, which string, spec estimate.Spec, gs []report.Grouping) {
	if col, words := report.GroupingWarning(spec, gs); words != "" {
		fmt.Fprintf(w, "Warning:%s %s Give --cluster %s to allow for it.\n\n", which, words, col)
	}
}

// padRight pads s with spaces to n characters (runes, not bytes: "≥" and
// accented group names count once).
func padRight(s string, n int) string {
	if k := utf8.RuneCountInString(s); k < n {
		return s + strings.Repeat(" ", n-k)
	}
	return s
}

// printSummary writes the effects and differences for a terminal.
func printSummary(w io.Writer, a *pipeline.Analysis) {
	out := report.Summarize(a.Run, a.Result)
	res := a.Result
	fmt.Fprintf(w, "%d rows used, %d left out; standard errors %s, %d df.\n\n", out.NUsed, out.NDropped, out.SEType, res.Model.DF)
	fmt.Fprintf(w, "Effect of %s on %s by %s%s:\n", res.Spec.Treatment.Column, res.Spec.Outcome, res.Moderator.Column, report.DesignTitle(res))
	if d := res.Design; d != nil && d.UnitEffects {
		fmt.Fprintf(w, "Unit effects: %d units of %s; not estimated separately: %s\n", d.Units, d.Unit, strings.Join(d.Absorbed, ", "))
	}
	// The labels' column as wide as the longest label (24 at least), so
	// that the numbers line up when arms lengthen the labels.
	lw := 24
	for _, g := range out.Groups {
		lw = max(lw, utf8.RuneCountInString(armed(g.Arm, g.Label)))
	}
	for _, d := range out.Differences {
		lw = max(lw, utf8.RuneCountInString(armed(d.Arm, d.Label)))
	}
	for _, g := range out.Groups {
		fmt.Fprintf(w, "  %s %12.4g   CI %10.4g to %-10.4g p = %.3g%s\n", padRight(armed(g.Arm, g.Label), lw), g.Estimate, g.CILow, g.CIHigh, g.P, bootText(g.OutBoot))
	}
	fmt.Fprintln(w, "Differences:")
	for _, d := range out.Differences {
		fmt.Fprintf(w, "  %s %12.4g   CI %10.4g to %-10.4g p = %.3g   detectable ≥ %.3g%s\n", padRight(armed(d.Arm, d.Label), lw), d.Estimate, d.CILow, d.CIHigh, d.P, d.MDD, bootText(d.OutBoot))
	}
	for _, a := range out.Arms {
		if h := a.Heterogeneity; h != nil {
			fmt.Fprintf(w, "Same effect of %s in every group? F = %.4g on %d and %g df, p = %.3g, Holm p = %.3g\n", a.Arm, h.F, h.DF1, h.DF2, h.P, a.HolmP)
		}
	}
	if h := out.Heterogeneity; h != nil {
		boot := pBootText(h.PBoot)
		what := "Same effect in every group?"
		if out.Arms != nil {
			what = "Same effect of every arm in every group?"
		}
		fmt.Fprintf(w, "%s F = %.4g on %d and %g df, p = %.3g%s\n", what, h.F, h.DF1, h.DF2, h.P, boot)
	} else if nj := out.HeterogeneityNotJudged; nj != nil {
		fmt.Fprintf(w, "Same effect in every group? %s\n", nj.Reason)
	}
	if d := out.Design; d != nil && d.Leads != nil {
		fmt.Fprintf(w, "Before the start (gaps against %s = %s):\n", d.Period, d.Leads.Reference)
		for _, l := range d.Leads.Leads {
			fmt.Fprintf(w, "  %s %12.4g   CI %10.4g to %-10.4g p = %.3g\n", padRight(armed(l.Arm, l.Label), lw), l.Estimate, l.CILow, l.CIHigh, l.P)
		}
		if t := d.Leads.Test; t != nil {
			fmt.Fprintf(w, "Parallel before the start? F = %.4g on %d and %g df, p = %.3g%s\n", t.F, t.DF1, t.DF2, t.P, pBootText(t.PBoot))
		}
	}
	if b := out.Bootstrap; b != nil {
		fmt.Fprintf(w, "Bootstrap: %d draws, %s weights, seed %d, all draws listed: %v\n", b.Draws, b.Weights, b.Seed, b.Enumerated)
	}
	fmt.Fprintf(w, "\n%s\n", out.Note)
}

// pBootText writes a joint test's bootstrap p-value, if any.
func pBootText(p *float64) string {
	if p == nil {
		return ""
	}
	return fmt.Sprintf("; bootstrap p = %.3g", *p)
}

// armed puts the arm before a label, with several arms.
func armed(arm, label string) string {
	if arm == "" {
		return label
	}
	return arm + ": " + label
}

// bootText writes the bootstrap's p-value and interval for a terminal.
func bootText(b report.OutBoot) string {
	switch {
	case b.PBoot == nil:
		return ""
	case b.CIBootLow == nil:
		return fmt.Sprintf("   bootstrap p = %.3g, interval unbounded", *b.PBoot)
	}
	return fmt.Sprintf("   bootstrap p = %.3g, CI %.4g to %.4g", *b.PBoot, *b.CIBootLow, *b.CIBootHigh)
}

// demo writes the demonstration workbook into a folder.
func demo(args []string, stdout io.Writer) error {
	fs := newFlagSet("demo", demoUsage, stdout)
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			fs.Usage()
			return err
		}
		return usageError{err.Error()}
	}
	if fs.NArg() != 1 {
		return usagef("give one folder to write the demo workbook into: slopewise demo DIR")
	}
	dir := fs.Arg(0)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create the folder %s: %w", dir, err)
	}
	files := []struct {
		name string
		data []byte
	}{{"slopewise-demo.xlsx", assets.DemoWorkbook}, {demodata.RolloutFile, assets.DemoRolloutWorkbook}}
	for _, f := range files {
		if path := filepath.Join(dir, f.name); fileExists(path) {
			return fmt.Errorf("%s already exists; remove it or choose another folder", path)
		}
	}
	for _, f := range files {
		if err := workbook.WriteWhole(filepath.Join(dir, f.name), f.data, 0o644); err != nil {
			return err
		}
	}
	fmt.Fprintf(stdout, "Demo workbook written to %s\n", filepath.Join(dir, files[0].name))
	fmt.Fprintf(stdout, "Second demo workbook (before and after, two arms) written to %s; to analyse it:\n  %s\n", filepath.Join(dir, files[1].name), demodata.RolloutCommand)
	return nil
}

func fileExists(path string) bool {
	_, err := os.Stat(path)
	return err == nil
}
