package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"
)

// agreement is the largest relative difference allowed between Slopewise's
// and the reference's effects and standard errors.
const agreement = 1e-8

// measure is one process run under /usr/bin/time -v.
type measure struct {
	wall   time.Duration
	rssKiB int64
	stdout []byte
}

// timed runs a command under /usr/bin/time -v and reads its wall time and
// peak resident set size from the report.
func timed(dir string, name string, args ...string) (*measure, error) {
	report := filepath.Join(dir, "time.txt")
	cmd := exec.Command("/usr/bin/time", append([]string{"-v", "-o", report, name}, args...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		return nil, fmt.Errorf("%s %s: %v\n%s", name, strings.Join(args, " "), err, tail(errb.String()))
	}
	text, err := os.ReadFile(report)
	if err != nil {
		return nil, err
	}
	m := &measure{stdout: out.Bytes()}
	for _, line := range strings.Split(string(text), "\n") {
		line = strings.TrimSpace(line)
		switch {
		case strings.HasPrefix(line, "Maximum resident set size (kbytes):"):
			m.rssKiB, _ = strconv.ParseInt(strings.TrimSpace(line[strings.LastIndex(line, ":")+1:]), 10, 64)
		case strings.HasPrefix(line, "Elapsed (wall clock) time"):
			m.wall = parseClock(line[strings.LastIndex(line, ": ")+2:])
		}
	}
	return m, nil
}

func tail(s string) string {
	if len(s) > 2000 {
		return "…" + s[len(s)-2000:]
	}
	return s
}

// parseClock reads GNU time's "h:mm:ss" or "m:ss.ss".
func parseClock(s string) time.Duration {
	parts := strings.Split(strings.TrimSpace(s), ":")
	var sec float64
	for _, p := range parts {
		v, _ := strconv.ParseFloat(p, 64)
		sec = sec*60 + v
	}
	return time.Duration(sec * float64(time.Second))
}

// effects is what both pipelines print: the group effects and the
// differences, each an estimate and its standard error.
type effects struct {
	NUsed  int       `json:"n_used"`
	ReadS  float64   `json:"read_s"`
	FitS   float64   `json:"fit_s"`
	Groups []outcome `json:"groups"`
	Diffs  []outcome `json:"differences"`
}

type outcome struct {
	Label    string  `json:"label"`
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
}

// compare returns the largest relative difference between the two sets of
// effects, or an error when they do not list the same things.
func compare(a, b *effects) (float64, error) {
	if a.NUsed != b.NUsed {
		return 0, fmt.Errorf("rows used: %d and %d", a.NUsed, b.NUsed)
	}
	worst := 0.0
	for _, pair := range [][2][]outcome{{a.Groups, b.Groups}, {a.Diffs, b.Diffs}} {
		if len(pair[0]) != len(pair[1]) {
			return 0, fmt.Errorf("%d and %d lines", len(pair[0]), len(pair[1]))
		}
		for i := range pair[0] {
			x, y := pair[0][i], pair[1][i]
			if x.Label != y.Label {
				return 0, fmt.Errorf("line %d: %q and %q", i, x.Label, y.Label)
			}
			worst = max(worst, relDiff(x.Estimate, y.Estimate), relDiff(x.SE, y.SE))
		}
	}
	return worst, nil
}

func relDiff(a, b float64) float64 {
	d := math.Abs(a - b)
	if d == 0 {
		return 0
	}
	return d / math.Max(math.Abs(a), math.Abs(b))
}

// row is one line of the table of whole runs.
type row struct {
	n                int
	format, se       string
	sw, ref          *measure
	swFit, refFit    time.Duration
	swRead, refRead  time.Duration
	diff             float64
	streamedOnlyNote string
}

func run(args []string) error {
	fs := flag.NewFlagSet("run", flag.ExitOnError)
	sizes := fs.String("rows", "10000,100000,1000000", "row counts of the side-by-side runs")
	streamSizes := fs.String("stream-rows", "1000000,10000000", "row counts of the CSV memory runs (Slopewise alone)")
	bin := fs.String("slopewise", "bin/slopewise", "the slopewise program")
	python := fs.String("python", "/usr/bin/python3", "Debian's Python, with statsmodels, pandas and openpyxl")
	ref := fs.String("reference", "bench/reference.py", "the reference pipeline")
	dir := fs.String("dir", "", "folder for the generated files (default: a new temporary folder, removed at the end)")
	formats := fs.String("formats", "csv,xlsx", "file formats")
	fs.Parse(args)
	ns, err := parseSizes(*sizes)
	if err != nil {
		return err
	}
	streamNs, err := parseSizes(*streamSizes)
	if err != nil {
		return err
	}
	work := *dir
	if work == "" {
		if work, err = os.MkdirTemp("", "slopebench-"); err != nil {
			return err
		}
		defer os.RemoveAll(work)
	}
	fmt.Printf("machine: %d cores, %s memory, %s %s/%s\n\n", runtime.NumCPU(), memTotal(), runtime.Version(), runtime.GOOS, runtime.GOARCH)

	var rows []row
	for _, n := range ns {
		for _, format := range strings.Split(*formats, ",") {
			path := filepath.Join(work, fmt.Sprintf("pilot-%d.%s", n, format))
			start := time.Now()
			if err := generate(path, n, 1); err != nil {
				return err
			}
			fmt.Fprintf(os.Stderr, "generated %s in %s\n", filepath.Base(path), time.Since(start).Round(time.Millisecond))
			inproc, err := inProcess(path)
			if err != nil {
				return err
			}
			for _, se := range []string{"hc3", "cluster"} {
				r := row{n: n, format: format, se: se, swRead: inproc.read, swFit: inproc.fit[se]}
				if r.sw, err = runSlopewise(work, *bin, path, se); err != nil {
					return err
				}
				if r.ref, err = timed(work, *python, *ref, path, "--se", se); err != nil {
					return err
				}
				var a, b effects
				if err := json.Unmarshal(r.sw.stdout, &a); err != nil {
					return fmt.Errorf("slopewise's JSON: %v", err)
				}
				if err := json.Unmarshal(r.ref.stdout, &b); err != nil {
					return fmt.Errorf("the reference's JSON: %v", err)
				}
				r.refFit = time.Duration(b.FitS * float64(time.Second))
				r.refRead = time.Duration(b.ReadS * float64(time.Second))
				if r.diff, err = compare(&a, &b); err != nil {
					return fmt.Errorf("%s, %s: the pipelines disagree: %v", filepath.Base(path), se, err)
				}
				if r.diff > agreement {
					return fmt.Errorf("%s, %s: the pipelines disagree by %.3g relative (allowed %g)", filepath.Base(path), se, r.diff, agreement)
				}
				fmt.Fprintf(os.Stderr, "  %s %s: slopewise %s %s, reference %s %s, agree to %.1e\n", filepath.Base(path), se,
					r.sw.wall.Round(time.Millisecond), mib(r.sw.rssKiB), r.ref.wall.Round(time.Millisecond), mib(r.ref.rssKiB), r.diff)
				rows = append(rows, r)
			}
			os.Remove(path)
		}
	}
	printTable(rows)

	if len(streamNs) > 0 {
		fmt.Println("\nPeak memory of a whole CSV run, Slopewise alone (streaming fit):")
		tw := tabwriter.NewWriter(os.Stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "rows\tSE\twall\tpeak RSS\t")
		for _, n := range streamNs {
			path := filepath.Join(work, fmt.Sprintf("pilot-%d.csv", n))
			if err := generate(path, n, 1); err != nil {
				return err
			}
			for _, se := range []string{"hc3", "cluster"} {
				m, err := runSlopewise(work, *bin, path, se)
				if err != nil {
					return err
				}
				fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t\n", n, se, secs(m.wall), mib(m.rssKiB))
			}
			os.Remove(path)
		}
		tw.Flush()
	}
	return nil
}

// runSlopewise runs a whole analyze: read, fit, write the results.
func runSlopewise(work, bin, path, se string) (*measure, error) {
	out := filepath.Join(work, "results.xlsx")
	os.Remove(out)
	args := append([]string{"analyze", path, "--json", "--out", out}, specArgs...)
	if se == "cluster" {
		args = append(args, "--se", "cluster", "--cluster", "school")
	} else {
		args = append(args, "--se", se)
	}
	m, err := timed(work, bin, args...)
	os.Remove(out)
	return m, err
}

func printTable(rows []row) {
	fmt.Println("Whole runs (read, fit, write for Slopewise; read, fit, print for the reference), wall time and peak RSS:")
	tw := tabwriter.NewWriter(os.Stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "rows\tfile\tSE\tSlopewise\tpeak\treference\tpeak\ttime ratio\tmemory ratio\tfit step\tref. fit\tfit ratio\tagree\t")
	for _, r := range rows {
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s\t%s\t%.1f×\t%.2f\t%s\t%s\t%.1f×\t%.0e\t\n", r.n, r.format, strings.ToUpper(r.se),
			secs(r.sw.wall), mib(r.sw.rssKiB), secs(r.ref.wall), mib(r.ref.rssKiB),
			r.ref.wall.Seconds()/r.sw.wall.Seconds(), float64(r.sw.rssKiB)/float64(r.ref.rssKiB),
			secs(r.swFit), secs(r.refFit), r.refFit.Seconds()/r.swFit.Seconds(), r.diff)
	}
	tw.Flush()
	fmt.Println("\ntime ratio = reference ÷ Slopewise (higher is better); memory ratio = Slopewise ÷ reference (lower is better).")
	fmt.Println("fit step: Slopewise's estimate.Fit on the table read (design, QR, variance, effects), in this process;")
	fmt.Println("ref. fit: the reference's design, statsmodels OLS fit with the covariance, and the effects, as it times itself.")
	fmt.Println("\nSheet and file reads in this process (workbook.Read):")
	tw = tabwriter.NewWriter(os.Stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "rows\tfile\tSlopewise read\trows/s\treference read\t")
	for _, r := range rows {
		if r.se != "hc3" {
			continue
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%.0f\t%s\t\n", r.n, r.format, secs(r.swRead), float64(r.n)/r.swRead.Seconds(), secs(r.refRead))
	}
	tw.Flush()
}

func secs(d time.Duration) string {
	if d < 10*time.Second {
		return fmt.Sprintf("%.2f s", d.Seconds())
	}
	return fmt.Sprintf("%.1f s", d.Seconds())
}

func mib(kib int64) string { return fmt.Sprintf("%.0f MiB", float64(kib)/1024) }

func memTotal() string {
	b, err := os.ReadFile("/proc/meminfo")
	if err != nil {
		return "?"
	}
	for _, line := range strings.Split(string(b), "\n") {
		if f := strings.Fields(line); len(f) >= 2 && f[0] == "MemTotal:" {
			kib, _ := strconv.ParseFloat(f[1], 64)
			return fmt.Sprintf("%.0f GiB", kib/(1<<20))
		}
	}
	return "?"
}
