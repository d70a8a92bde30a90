//go:build linux

package workbook

import (
	"archive/zip"
	"bufio"
	"bytes"
	"crypto/sha256"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"
)

// The attack suite: hostile and odd input files given to the built
// command-line program, each in a child process watched for time and
// memory. It runs only with -attack (make attack); a run takes several
// minutes and writes inputs that inflate to gigabytes, streamed, never held
// in memory. At the end it prints a Markdown table of what happened, also
// written to the file named by SLOPEWISE_ATTACK_REPORT if that is set.
//
// Linux only: the watchdog reads /proc and kills a process group.

var attack = flag.Bool("attack", false, "run the attack suite: hostile input files against the built program (make attack; several minutes)")

// Limits of the harness.
const (
	// atkWall is the wall-clock limit of one run; past it the process
	// group is killed and the run counts as "killed: time".
	atkWall = 60 * time.Second
	// atkKillRSS is the memory watchdog's limit: a child whose resident
	// set passes 2 GiB is killed ("killed: memory"), so that no run can
	// take the machine down (the brief: no child above about 2 GB).
	atkKillRSS = 2 << 30
	// atkPoll is how often the watchdog reads /proc/PID/status.
	atkPoll = 20 * time.Millisecond
	// atkMaxRSS is the peak resident set a run may reach: every input
	// here is under 20 MB on disk, and reading one should take no more
	// than a small multiple of that (the brief: under 300 MB).
	atkMaxRSS = 300 << 20
	// atkMaxStderr is the longest error message that still reads as a
	// message rather than a dump (the brief: 2,000 bytes).
	atkMaxStderr = 2000
	// atkMaxRatio is the largest time ratio allowed between a run at 4N
	// and one at N; linear work gives about 4, and time is noisy on a
	// shared two-core machine, so the bound is generous (the brief: 12).
	atkMaxRatio = 12
)

// Excel's limits, from memory: 1,048,576 rows, 16,384 columns (A to XFD),
// 32,767 characters a cell. The cases below go past each of them.
const atkExcelCols = 16384

// atkCase is one hostile input and the command run on it.
type atkCase struct {
	name string
	// n is the size handed to make (rows, cells, bytes: the case says).
	n int64
	// scale also runs the case at n/4 and compares the two times.
	scale bool
	// make writes the input into dir and returns its path.
	make func(t *testing.T, dir string, n int64) string
	// args is the command after the program's name; "{file}" stands for
	// the input's name (the child runs in its folder). Nil: analyze with
	// the roles y, t, g and --dry-run.
	args []string
	// window runs the program built with the window, and unsets DISPLAY
	// and WAYLAND_DISPLAY.
	window bool
	// want and wantNot are regular expressions on standard error.
	want, wantNot string
	// exits are the exit codes expected; nil: the generic 0 or 1.
	exits []int
	// inPlace: the command writes into the input, which may then change.
	inPlace bool
	// allowNew matches the names of files the command may add to the
	// folder when it succeeds (a backup, "<name> results.xlsx").
	allowNew string
	// check runs further checks after the generic ones.
	check func(t *testing.T, dir string, r *atkResult)
}

// atkResult is what one run did.
type atkResult struct {
	name      string
	size      int64 // the input's size on disk
	exit      string
	code      int // -1 when killed or ended by a signal
	wall      time.Duration
	peakKiB   int64
	stderr    atkCapture
	stdout    atkCapture
	unchanged bool
	newFiles  []string
	ratio     string // 4N/N time, for the 4N run of a scaled case
	skipped   string
}

func TestAttack(t *testing.T) {
	if !*attack {
		t.Skip("the attack suite runs only with -attack (make attack)")
	}
	root := atkModuleRoot(t)
	bin := filepath.Join(t.TempDir(), "slopewise")
	// The command-line build; -tags nowindow leaves out the window (and
	// cgo). If it does not build here, the ordinary build does too.
	if out, err := atkGo(root, "build", "-tags", "nowindow", "-o", bin, "./cmd/app"); err != nil {
		t.Logf("-tags nowindow does not build (%v): %s; building with the window", err, out)
		if out, err := atkGo(root, "build", "-o", bin, "./cmd/app"); err != nil {
			t.Fatalf("go build: %v\n%s", err, out)
		}
	}
	// The build with the window, for the one case that opens it; built
	// only when reached, and that case is skipped if it fails (cgo and the
	// GL and X11 headers are needed).
	var winOnce sync.Once
	var winBin, winErr string
	windowBin := func() (string, string) {
		winOnce.Do(func() {
			p := filepath.Join(t.TempDir(), "slopewise-window")
			if out, err := atkGo(root, "build", "-o", p, "./cmd/app"); err != nil {
				winErr = fmt.Sprintf("%v: %s", err, atkOneLine(string(out), 200))
				return
			}
			winBin = p
		})
		return winBin, winErr
	}

	var results []*atkResult
	for _, c := range atkCases() {
		t.Run(c.name, func(t *testing.T) {
			b := bin
			if c.window {
				p, why := windowBin()
				if p == "" {
					results = append(results, &atkResult{name: c.name, skipped: "the window build failed: " + why})
					t.Skipf("cannot build the window program: %s", why)
				}
				b = p
			}
			var quarter *atkResult
			if c.scale {
				quarter = atkRunCase(t, b, c, c.n/4, c.name+" (N/4)")
				results = append(results, quarter)
			}
			r := atkRunCase(t, b, c, c.n, c.name)
			results = append(results, r)
			if quarter != nil {
				atkRatio(t, c.name, quarter, r)
			}
		})
	}

	table := atkTable(results)
	fmt.Print("\n" + table)
	if p := os.Getenv("SLOPEWISE_ATTACK_REPORT"); p != "" {
		if err := os.WriteFile(p, []byte(table), 0o644); err != nil {
			t.Errorf("writing the report: %v", err)
		}
	}
}

// atkModuleRoot is the module's folder: go env GOMOD, or three levels up
// from this package (internal/io/workbook).
func atkModuleRoot(t *testing.T) string {
	if out, err := exec.Command("go", "env", "GOMOD").Output(); err == nil {
		if mod := strings.TrimSpace(string(out)); mod != "" && mod != os.DevNull {
			return filepath.Dir(mod)
		}
	}
	root, err := filepath.Abs(filepath.Join("..", "..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, "go.mod")); err != nil {
		t.Fatalf("no module root: %v", err)
	}
	return root
}

// atkGo runs the go command in dir. go test puts its own GOROOT/bin first
// on PATH, so "go" is the toolchain running the test.
func atkGo(dir string, args ...string) ([]byte, error) {
	cmd := exec.Command("go", args...)
	cmd.Dir = dir
	return cmd.CombinedOutput()
}

// atkRunCase makes the case's input at size n in a fresh folder, runs the
// program on it and applies the generic checks and the case's own.
func atkRunCase(t *testing.T, bin string, c atkCase, n int64, label string) *atkResult {
	t.Helper()
	dir := t.TempDir()
	path := c.make(t, dir, n)
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	sumBefore := atkHash(t, path)
	before := atkList(t, dir)

	args := c.args
	if args == nil {
		args = []string{"analyze", "{file}", "--outcome", "y", "--treatment", "t", "--moderator", "g", "--dry-run"}
	}
	args = append([]string(nil), args...)
	for i := range args {
		args[i] = strings.ReplaceAll(args[i], "{file}", filepath.Base(path))
	}
	env := atkEnv(c.window)

	r := atkExec(t, bin, dir, args, env)
	r.name, r.size = label, fi.Size()
	r.unchanged = atkHash(t, path) == sumBefore
	for name := range atkList(t, dir) {
		if !before[name] {
			r.newFiles = append(r.newFiles, name)
		}
	}
	sort.Strings(r.newFiles)

	// The generic checks.
	allowed := c.exits
	if allowed == nil {
		allowed = []int{0, 1}
	}
	ok := false
	for _, e := range allowed {
		ok = ok || r.code == e
	}
	if !ok {
		t.Errorf("%s: exit %s, want one of %v", label, r.exit, allowed)
	}
	if r.stderr.trace {
		t.Errorf("%s: standard error holds a Go stack trace: %s", label, atkOneLine(r.stderr.String(), 300))
	}
	if r.stderr.n > atkMaxStderr {
		t.Errorf("%s: standard error is %d bytes, more than %d", label, r.stderr.n, atkMaxStderr)
	}
	if r.peakKiB<<10 > atkMaxRSS {
		t.Errorf("%s: peak resident memory %.0f MB, more than %d MB", label, float64(r.peakKiB)/1024, atkMaxRSS>>20)
	}
	wrote := r.code == 0
	if !r.unchanged && !(c.inPlace && wrote) {
		t.Errorf("%s: the input file changed", label)
	}
	var allow *regexp.Regexp
	if c.allowNew != "" && wrote {
		allow = regexp.MustCompile(c.allowNew)
	}
	for _, name := range r.newFiles {
		if allow == nil || !allow.MatchString(name) {
			t.Errorf("%s: a new file appeared beside the input: %q", label, name)
		}
	}
	msg := r.stderr.String()
	if c.want != "" && !regexp.MustCompile(c.want).MatchString(msg) {
		t.Errorf("%s: standard error does not match %q: %s", label, c.want, atkOneLine(msg, 300))
	}
	if c.wantNot != "" && regexp.MustCompile(c.wantNot).MatchString(msg) {
		t.Errorf("%s: standard error matches %q: %s", label, c.wantNot, atkOneLine(msg, 300))
	}
	if c.check != nil {
		c.check(t, dir, r)
	}
	t.Logf("%s: exit %s in %v, peak %.0f MB; stderr %d bytes: %s", label, r.exit, r.wall.Round(time.Millisecond),
		float64(r.peakKiB)/1024, r.stderr.n, atkOneLine(msg, 300))
	return r
}

// atkRatio reports the time of the 4N run over that of the N run and fails
// the case above atkMaxRatio.
func atkRatio(t *testing.T, name string, quarter, full *atkResult) {
	t.Helper()
	switch {
	case quarter.code == -1 && quarter.exit != "":
		full.ratio = "n/a"
		return
	case quarter.wall <= 0:
		full.ratio = "n/a"
		return
	}
	ratio := float64(full.wall) / float64(quarter.wall)
	full.ratio = fmt.Sprintf("%.1f", ratio)
	switch {
	case full.exit == "killed: time":
		full.ratio = "≥ " + full.ratio // a lower bound
	case full.code == -1:
		full.ratio = "n/a" // killed for memory: its time says nothing
		return
	}
	if ratio > atkMaxRatio {
		t.Errorf("%s: 4N took %.1f times as long as N (%v against %v), more than %d", name, ratio,
			full.wall.Round(time.Millisecond), quarter.wall.Round(time.Millisecond), atkMaxRatio)
	}
}

// atkCustomXMLBomb writes a valid workbook with a part nothing reads,
// customXml/item1.xml, that inflates to n bytes.
func atkCustomXMLBomb(t *testing.T, dir string, n int64) string {
	head, tail := atkDecl+`<root>`, `</root>`
	body := atkSeq(head, func(w io.Writer) error {
		return atkFill(w, "<a/>", n-int64(len(head)+len(tail)))
	}, tail)
	return atkValidBook("book.xlsx", atkBook{
		extra: []atkPart{{"customXml/item1.xml", body}},
		rels:  `<Relationship Id="rIdC" Type="` + atkRel + `customXml" Target="../customXml/item1.xml"/>`,
	})(t, dir, n)
}

// atkEnv is the child's environment: this one without the CPU profile and,
// for the window, without a display.
func atkEnv(window bool) []string {
	var env []string
	for _, kv := range os.Environ() {
		k, _, _ := strings.Cut(kv, "=")
		if k == "SLOPEWISE_CPUPROFILE" || window && (k == "DISPLAY" || k == "WAYLAND_DISPLAY" || k == "LANG" || k == "LC_ALL") {
			continue
		}
		env = append(env, kv)
	}
	if window {
		// A desktop session has a locale; in the C locale Fyne 2.7's
		// package lang logs three lines at start-up (lang/locale.go),
		// before any code of ours runs.
		env = append(env, "LANG=en_US.UTF-8")
	}
	return env
}

// atkExec runs bin in dir with a wall-clock limit and a memory watchdog.
func atkExec(t *testing.T, bin, dir string, args, env []string) *atkResult {
	t.Helper()
	r := &atkResult{}
	cmd := exec.Command(bin, args...)
	cmd.Dir = dir
	cmd.Env = env
	cmd.Stdout = &r.stdout
	cmd.Stderr = &r.stderr
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	cmd.WaitDelay = 5 * time.Second
	start := time.Now()
	if err := cmd.Start(); err != nil {
		t.Fatalf("starting %s: %v", bin, err)
	}
	pid := cmd.Process.Pid

	var mu sync.Mutex
	killed := ""
	kill := func(why string) {
		mu.Lock()
		if killed == "" {
			killed = why
		}
		mu.Unlock()
		syscall.Kill(-pid, syscall.SIGKILL) // the whole process group
	}
	timer := time.AfterFunc(atkWall, func() { kill("killed: time") })

	var peak atomic.Int64 // KiB
	done := make(chan struct{})
	var watch sync.WaitGroup
	watch.Add(1)
	go func() {
		defer watch.Done()
		tick := time.NewTicker(atkPoll)
		defer tick.Stop()
		for {
			select {
			case <-done:
				return
			case <-tick.C:
			}
			rss, hwm, ok := atkStatus(pid)
			if !ok {
				continue
			}
			for _, v := range []int64{rss, hwm} {
				if v > peak.Load() {
					peak.Store(v)
				}
			}
			if rss<<10 > atkKillRSS {
				kill("killed: memory")
				return
			}
		}
	}()

	err := cmd.Wait()
	r.wall = time.Since(start)
	timer.Stop()
	close(done)
	watch.Wait()

	r.peakKiB = peak.Load()
	st := cmd.ProcessState
	if st == nil {
		t.Fatalf("running %s: %v", bin, err)
	}
	if ru, ok := st.SysUsage().(*syscall.Rusage); ok && ru.Maxrss > r.peakKiB {
		r.peakKiB = ru.Maxrss // KiB on Linux
	}
	mu.Lock()
	defer mu.Unlock()
	switch ws, _ := st.Sys().(syscall.WaitStatus); {
	case killed != "":
		r.exit, r.code = killed, -1
	case st.Exited():
		r.code = st.ExitCode()
		r.exit = strconv.Itoa(r.code)
	case ws.Signaled():
		r.exit, r.code = "signal: "+ws.Signal().String(), -1
	default:
		r.exit, r.code = st.String(), -1
	}
	return r
}

// atkStatus reads VmRSS and VmHWM, in KiB, from /proc/PID/status.
func atkStatus(pid int) (rss, hwm int64, ok bool) {
	b, err := os.ReadFile("/proc/" + strconv.Itoa(pid) + "/status")
	if err != nil {
		return 0, 0, false
	}
	field := func(name string) int64 {
		i := bytes.Index(b, []byte(name))
		if i < 0 {
			return 0
		}
		rest := b[i+len(name):]
		if j := bytes.IndexByte(rest, '\n'); j >= 0 {
			rest = rest[:j]
		}
		f := strings.Fields(string(rest)) // "  123456 kB"
		if len(f) == 0 {
			return 0
		}
		v, _ := strconv.ParseInt(f[0], 10, 64)
		return v
	}
	return field("VmRSS:"), field("VmHWM:"), true
}

// atkCapture keeps the start and the end of a stream, its length, and
// whether it held a Go stack trace anywhere.
type atkCapture struct {
	mu    sync.Mutex
	head  []byte // the first atkHead bytes
	tail  []byte // the last atkTail bytes
	n     int64
	trace bool
	carry []byte // the end of the last write, for markers split across writes
}

const (
	atkHead = 64 << 10
	atkTail = 2 << 10
)

// atkTraceMarks are what a Go panic or runtime failure prints.
var atkTraceMarks = [][]byte{[]byte("goroutine "), []byte("panic:"), []byte("fatal error:")}

func (c *atkCapture) Write(p []byte) (int, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.n += int64(len(p))
	if room := atkHead - len(c.head); room > 0 {
		c.head = append(c.head, p[:min(room, len(p))]...)
	}
	c.tail = append(c.tail, p[max(0, len(p)-atkTail):]...)
	if len(c.tail) > atkTail {
		c.tail = append([]byte(nil), c.tail[len(c.tail)-atkTail:]...)
	}
	if !c.trace {
		s := append(c.carry, p...)
		for _, m := range atkTraceMarks {
			c.trace = c.trace || bytes.Contains(s, m)
		}
		c.carry = append([]byte(nil), s[max(0, len(s)-16):]...)
	}
	return len(p), nil
}

// String is the start of the stream.
func (c *atkCapture) String() string {
	c.mu.Lock()
	defer c.mu.Unlock()
	return string(c.head)
}

// lastLine is the last line of the stream that is not blank.
func (c *atkCapture) lastLine() string {
	c.mu.Lock()
	defer c.mu.Unlock()
	lines := strings.Split(strings.TrimSpace(string(c.tail)), "\n")
	return lines[len(lines)-1]
}

// atkHash is the SHA-256 of a file, streamed.
func atkHash(t *testing.T, path string) string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		t.Fatal(err)
	}
	return fmt.Sprintf("%x", h.Sum(nil))
}

// atkList is the set of names in dir.
func atkList(t *testing.T, dir string) map[string]bool {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	m := map[string]bool{}
	for _, e := range es {
		m[e.Name()] = true
	}
	return m
}

// atkOneLine shortens s to n bytes on one line.
func atkOneLine(s string, n int) string {
	s = strings.Join(strings.Fields(s), " ")
	if len(s) > n {
		s = s[:n] + "…"
	}
	return s
}

// atkTable is the Markdown table of the results.
func atkTable(rs []*atkResult) string {
	var b strings.Builder
	b.WriteString("| case | input | exit | wall s | peak RSS MB | 4N/N time | message (stderr, else the last line of stdout) |\n")
	b.WriteString("|---|---:|---|---:|---:|---:|---|\n")
	for _, r := range rs {
		if r.skipped != "" {
			fmt.Fprintf(&b, "| %s | | skipped | | | | %s |\n", r.name, atkCell(r.skipped, 120))
			continue
		}
		msg := r.stderr.String()
		if strings.TrimSpace(msg) == "" && r.stdout.n > 0 {
			msg = "(stdout) " + r.stdout.lastLine()
		}
		fmt.Fprintf(&b, "| %s | %s | %s | %.2f | %.0f | %s | %s |\n", r.name, atkSize(r.size), r.exit,
			r.wall.Seconds(), float64(r.peakKiB)/1024, r.ratio, atkCell(msg, 120))
	}
	return b.String()
}

func atkCell(s string, n int) string {
	s = atkOneLine(s, 1<<20)
	if r := []rune(s); len(r) > n {
		s = string(r[:n]) + "…"
	}
	return strings.ReplaceAll(s, "|", `\|`)
}

func atkSize(n int64) string {
	switch {
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.0f KB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}

// Making the inputs. Workbooks follow rawBook's minimal package
// (fixtures_test.go) but write every part as a stream, so that a part that
// inflates to gigabytes is never held in memory; DEFLATE keeps such parts
// small on disk.

const (
	atkDecl = `<?xml version="1.0" encoding="UTF-8" standalone="yes"?>`
	atkNS   = `xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"`
	atkRel  = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/"
	// atkSheetStart and atkSheetEnd wrap a worksheet's rows.
	atkSheetStart = atkDecl + `<worksheet ` + atkNS + `><sheetData>`
	atkSheetEnd   = `</sheetData></worksheet>`
	// atkStyles is a minimal styles part (one font, fill, border, style).
	atkStyles = atkDecl + `<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs><cellXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/></cellXfs></styleSheet>`
)

// atkPart is one part of a package, written by body.
type atkPart struct {
	name string
	body func(w io.Writer) error
}

func atkText(s string) func(w io.Writer) error {
	return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
}

// atkBook is a one-sheet workbook, each part streamed.
type atkBook struct {
	sheet    func(w io.Writer) error // the whole of xl/worksheets/sheet1.xml
	workbook func(w io.Writer) error // nil: one sheet, "Data"
	styles   func(w io.Writer) error // nil: atkStyles
	noStyles bool                    // no styles part, relationship or content type
	shared   func(w io.Writer) error // nil: no shared strings part
	extra    []atkPart               // more parts (Default content type xml)
	rels     string                  // more relationships of the workbook
}

func (b atkBook) write(t *testing.T, path string) string {
	t.Helper()
	ct := atkDecl + `<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>`
	rels := atkDecl + `<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="` + atkRel + `worksheet" Target="worksheets/sheet1.xml"/>`
	parts := []atkPart{{"xl/worksheets/sheet1.xml", b.sheet}}
	if !b.noStyles {
		ct += `<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>`
		rels += `<Relationship Id="rIdS" Type="` + atkRel + `styles" Target="styles.xml"/>`
		styles := b.styles
		if styles == nil {
			styles = atkText(atkStyles)
		}
		parts = append(parts, atkPart{"xl/styles.xml", styles})
	}
	if b.shared != nil {
		ct += `<Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/>`
		rels += `<Relationship Id="rIdT" Type="` + atkRel + `sharedStrings" Target="sharedStrings.xml"/>`
		parts = append(parts, atkPart{"xl/sharedStrings.xml", b.shared})
	}
	wb := b.workbook
	if wb == nil {
		wb = atkText(atkDecl + `<workbook ` + atkNS + `><sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>`)
	}
	head := []atkPart{
		{"[Content_Types].xml", atkText(ct + `</Types>`)},
		{"_rels/.rels", atkText(atkDecl + `<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="` + atkRel + `officeDocument" Target="xl/workbook.xml"/></Relationships>`)},
		{"xl/workbook.xml", wb},
		{"xl/_rels/workbook.xml.rels", atkText(rels + b.rels + `</Relationships>`)},
	}
	atkZip(t, path, append(append(head, parts...), b.extra...))
	return path
}

// atkZip writes the parts into a zip archive at path, each DEFLATEd.
func atkZip(t *testing.T, path string, parts []atkPart) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	bw := bufio.NewWriterSize(f, 1<<20)
	zw := zip.NewWriter(bw)
	for _, p := range parts {
		w, err := zw.CreateHeader(&zip.FileHeader{Name: p.name, Method: zip.Deflate, Modified: time.Date(2024, 1, 2, 3, 4, 5, 0, time.UTC)})
		if err != nil {
			t.Fatal(err)
		}
		if err := p.body(w); err != nil {
			t.Fatalf("%s: %v", p.name, err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := bw.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// atkRepeat writes s n times, about a mebibyte at a time.
func atkRepeat(w io.Writer, s string, n int64) error {
	k := max(1, int64(1<<20)/int64(len(s)))
	chunk := []byte(strings.Repeat(s, int(min(k, max(n, 1)))))
	for n > 0 {
		m := min(n, int64(len(chunk)/len(s)))
		if _, err := w.Write(chunk[:m*int64(len(s))]); err != nil {
			return err
		}
		n -= m
	}
	return nil
}

// atkFill writes exactly size bytes of s repeated (the last copy cut).
func atkFill(w io.Writer, s string, size int64) error {
	if err := atkRepeat(w, s, size/int64(len(s))); err != nil {
		return err
	}
	_, err := io.WriteString(w, s[:size%int64(len(s))])
	return err
}

// atkSeq writes its pieces in turn: strings verbatim, functions called.
func atkSeq(pieces ...any) func(w io.Writer) error {
	return func(w io.Writer) error {
		for _, p := range pieces {
			var err error
			switch p := p.(type) {
			case string:
				_, err = io.WriteString(w, p)
			case func(io.Writer) error:
				if p != nil {
					err = p(w)
				}
			default:
				panic(fmt.Sprintf("atkSeq: %T", p))
			}
			if err != nil {
				return err
			}
		}
		return nil
	}
}

// atkCol is the letters of a 0-based column (0 → A, 16383 → XFD).
func atkCol(i int) string {
	var b []byte
	for i++; i > 0; i = (i - 1) / 26 {
		b = append([]byte{byte('A' + (i-1)%26)}, b...)
	}
	return string(b)
}

// The small valid data: y numbers, t 0/1, g two text groups crossed with
// t, so that the model of every case can be fitted when the reader lets
// it through.
const atkRows = 48

func atkY(i int) float64 {
	t, s := float64(i%2), float64((i/2)%2)
	return 10 + 2*t + 3*s + 1.5*t*s + float64((i*7)%11)/10
}
func atkT(i int) int { return i % 2 }
func atkG(i int) string {
	if (i/2)%2 == 0 {
		return "north"
	}
	return "south"
}

// atkInl is an inline-string cell; atkNum a number cell.
func atkInl(ref, v string) string {
	return fmt.Sprintf(`<c r="%s" t="inlineStr"><is><t>%s</t></is></c>`, ref, v)
}
func atkNum(ref string, v any) string { return fmt.Sprintf(`<c r="%s"><v>%v</v></c>`, ref, v) }

// atkHeaderRow is row 1 naming the columns.
func atkHeaderRow(names ...string) string {
	var b strings.Builder
	b.WriteString(`<row r="1">`)
	for j, n := range names {
		b.WriteString(atkInl(atkCol(j)+"1", n))
	}
	b.WriteString(`</row>`)
	return b.String()
}

// atkDataRow is data row i (sheet row i+2) with y, t and g, then more
// cells, which carry their own references.
func atkDataRow(i int, more string) string {
	r := i + 2
	return fmt.Sprintf(`<row r="%d">%s%s%s%s</row>`, r, atkNum(fmt.Sprint("A", r), atkY(i)),
		atkNum(fmt.Sprint("B", r), atkT(i)), atkInl(fmt.Sprint("C", r), atkG(i)), more)
}

// atkValidSheet is the small valid sheet; y, if given, replaces the outcome
// and g the moderator (as numbers).
func atkValidSheet(y func(i int) float64, g func(i int) float64) string {
	var b strings.Builder
	b.WriteString(atkSheetStart + atkHeaderRow("y", "t", "g"))
	for i := range atkRows {
		row := atkDataRow(i, "")
		if y != nil || g != nil {
			r := i + 2
			yv, gv := atkNum(fmt.Sprint("A", r), atkY(i)), atkInl(fmt.Sprint("C", r), atkG(i))
			if y != nil {
				yv = atkNum(fmt.Sprint("A", r), strconv.FormatFloat(y(i), 'g', -1, 64))
			}
			if g != nil {
				gv = atkNum(fmt.Sprint("C", r), g(i))
			}
			row = fmt.Sprintf(`<row r="%d">%s%s%s</row>`, r, yv, atkNum(fmt.Sprint("B", r), atkT(i)), gv)
		}
		b.WriteString(row)
	}
	b.WriteString(atkSheetEnd)
	return b.String()
}

// atkValidBook writes the small valid workbook as name in dir.
func atkValidBook(name string, b atkBook) func(t *testing.T, dir string, n int64) string {
	return func(t *testing.T, dir string, n int64) string {
		if b.sheet == nil {
			b.sheet = atkText(atkValidSheet(nil, nil))
		}
		return b.write(t, filepath.Join(dir, name))
	}
}

// atkCSVRow is data row i of a CSV, then more fields.
func atkCSVRow(i int, g string, more func(w io.Writer) error) func(w io.Writer) error {
	if g == "" {
		g = atkG(i)
	}
	return atkSeq(fmt.Sprintf("%v,%d,%s", atkY(i), atkT(i), g), more, "\n")
}

// atkFile writes a plain file from body.
func atkFile(t *testing.T, path string, body func(w io.Writer) error) string {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	bw := bufio.NewWriterSize(f, 1<<20)
	if err := body(bw); err != nil {
		t.Fatal(err)
	}
	if err := bw.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// atkNames writes ",c<from>,…,c<to>": column names after y, t and g.
func atkNames(from, to int64) func(w io.Writer) error {
	return func(w io.Writer) error {
		var b []byte
		for j := from; j <= to; j++ {
			b = append(b, ",c"...)
			b = strconv.AppendInt(b, j, 10)
			if len(b) > 1<<20 {
				if _, err := w.Write(b); err != nil {
					return err
				}
				b = b[:0]
			}
		}
		_, err := w.Write(b)
		return err
	}
}

// atkSharedSmall are the shared strings the '#' and huge-string cases
// start with: the header and the two groups, indexes 0 to 4.
const atkSharedSmall = `<si><t>y</t></si><si><t>t</t></si><si><t>g</t></si><si><t>north</t></si><si><t>south</t></si>`

// atkSharedRow is data row i with the names and groups as shared strings
// (index 3 or 4) and more cells after them.
func atkSharedRow(i int, more string) string {
	r := i + 2
	gi := 3
	if atkG(i) == "south" {
		gi = 4
	}
	return fmt.Sprintf(`<row r="%d">%s%s<c r="C%d" t="s"><v>%d</v></c>%s</row>`, r, atkNum(fmt.Sprint("A", r), atkY(i)),
		atkNum(fmt.Sprint("B", r), atkT(i)), r, gi, more)
}

// atkSharedHeader names y, t, g through the shared strings and note inline.
const atkSharedHeader = `<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="s"><v>1</v></c><c r="C1" t="s"><v>2</v></c><c r="D1" t="inlineStr"><is><t>note</t></is></c></row>`

// atkNested is the small valid workbook whose workbook.xml holds n nested
// elements.
func atkNested(t *testing.T, dir string, n int64) string {
	wb := atkSeq(atkDecl+`<workbook `+atkNS+`>`,
		func(w io.Writer) error { return atkRepeat(w, "<a>", n) },
		func(w io.Writer) error { return atkRepeat(w, "</a>", n) },
		`<sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>`)
	return atkValidBook("book.xlsx", atkBook{workbook: wb})(t, dir, n)
}

// atkManyStyles is the small valid workbook with n cell styles.
func atkManyStyles(t *testing.T, dir string, n int64) string {
	st := atkSeq(atkDecl+`<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><fonts count="1"><font/></fonts><fills count="1"><fill/></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf/></cellStyleXfs>`,
		fmt.Sprintf(`<cellXfs count="%d">`, n),
		func(w io.Writer) error { return atkRepeat(w, "<xf/>", n) },
		`</cellXfs></styleSheet>`)
	return atkValidBook("book.xlsx", atkBook{styles: st})(t, dir, n)
}

func atkCases() []atkCase {
	noStyleCheck := func(t *testing.T, dir string, r *atkResult) {
		if r.code != 0 {
			return
		}
		f, err := excelize.OpenFile(filepath.Join(dir, "book.xlsx"))
		if err != nil {
			t.Errorf("%s: the workbook written in place does not open in excelize: %v", r.name, err)
			return
		}
		defer f.Close()
		t.Logf("%s: written in place; sheets %v", r.name, f.GetSheetList())
	}
	noStyle := func(name string, b atkBook) atkCase {
		return atkCase{
			name:     name,
			make:     atkValidBook("book.xlsx", b),
			args:     []string{"analyze", "{file}", "--outcome", "y", "--treatment", "t", "--moderator", "g"},
			exits:    []int{0, 1},
			wantNot:  `(?i)please report`,
			inPlace:  true,
			allowNew: `^book \(before Slopewise .*\)\.xlsx$`,
			check:    noStyleCheck,
		}
	}
	return []atkCase{
		{
			// The control: a small valid workbook, which must be fitted.
			name:  "control",
			make:  atkValidBook("book.xlsx", atkBook{}),
			exits: []int{0},
		},
		{
			// 12 million nested elements in workbook.xml (84 MB inflated).
			name: "workbook.xml nested 12M deep",
			n:    12_000_000,
			make: atkNested,
		},
		{
			// 8 million (56 MB), under the reader's 64 MiB limit on an XML
			// part (DefaultUnzipXMLSizeLimit, read.go), which refuses the
			// 12 million by size before their depth is looked at.
			name: "workbook.xml nested 8M deep (under the part limit)",
			n:    8_000_000,
			make: atkNested,
		},
		{
			// 20 million cell styles (100 MB inflated).
			name: "styles.xml 20M <xf/>",
			n:    20_000_000,
			make: atkManyStyles,
		},
		{
			// 12 million (60 MB), under the 64 MiB limit on an XML part.
			name: "styles.xml 12M <xf/> (under the part limit)",
			n:    12_000_000,
			make: atkManyStyles,
		},
		{
			// A part nothing reads that inflates to 3.9 GB, under zip's
			// 4 GiB limit without zip64.
			name: "customXml 3.9 GB",
			n:    3_900_000_000,
			make: atkCustomXMLBomb,
		},
		{
			// The same part, the results written in place: excelize holds
			// every part it opens in memory, so the writer must refuse it.
			name:  "customXml 3.9 GB, written",
			n:     3_900_000_000,
			make:  atkCustomXMLBomb,
			args:  []string{"analyze", "{file}", "--outcome", "y", "--treatment", "t", "--moderator", "g"},
			exits: []int{1},
			want:  `unpacks to .* far more than a genuine part does`,
		},
		{
			// Shared strings of 3.9 GB: the header and groups, then one
			// string of 3.9 GB, which one cell uses.
			name: "sharedStrings 3.9 GB",
			n:    3_900_000_000,
			make: func(t *testing.T, dir string, n int64) string {
				head := atkDecl + `<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="6" uniqueCount="6">` + atkSharedSmall + `<si><t>`
				tail := `</t></si></sst>`
				ss := atkSeq(head, func(w io.Writer) error { return atkFill(w, "x", n-int64(len(head)+len(tail))) }, tail)
				var sh strings.Builder
				sh.WriteString(atkSheetStart + atkSharedHeader)
				for i := range atkRows {
					more := ""
					if i == 0 {
						more = `<c r="D2" t="s"><v>5</v></c>`
					}
					sh.WriteString(atkSharedRow(i, more))
				}
				sh.WriteString(atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{shared: ss, sheet: atkText(sh.String())})(t, dir, n)
			},
		},
		{
			// 37 million rows without r attributes, past Excel's
			// 1,048,576; the header names y, t and g, the rows hold y.
			name:  "sheet 37M rows",
			n:     37_000_000,
			scale: true,
			make: func(t *testing.T, dir string, n int64) string {
				sh := atkSeq(atkSheetStart+`<row><c t="inlineStr"><is><t>y</t></is></c><c t="inlineStr"><is><t>t</t></is></c><c t="inlineStr"><is><t>g</t></is></c></row>`,
					func(w io.Writer) error { return atkRepeat(w, `<row><c><v>1</v></c></row>`, n) },
					atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{sheet: sh})(t, dir, n)
			},
		},
		{
			// One inline-string cell of 512 MiB, past Excel's 32,767
			// characters, in a column "note" beside the valid data.
			name:  "cell of 512 MiB",
			n:     512 << 20,
			scale: true,
			make: func(t *testing.T, dir string, n int64) string {
				var rest strings.Builder
				for i := 1; i < atkRows; i++ {
					rest.WriteString(atkDataRow(i, ""))
				}
				sh := atkSeq(atkSheetStart+atkHeaderRow("y", "t", "g", "note"),
					strings.TrimSuffix(atkDataRow(0, ""), "</row>")+`<c r="D2" t="inlineStr"><is><t>`,
					func(w io.Writer) error { return atkRepeat(w, "x", n) },
					`</t></is></c></row>`, rest.String(), atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{sheet: sh})(t, dir, n)
			},
		},
		{
			// A header of 16,384 columns (A1 to XFD1, Excel's width) over
			// 1,000,000 rows of one cell each.
			name: "16,384-column header, 1M rows",
			n:    1_000_000,
			make: func(t *testing.T, dir string, n int64) string {
				names := []string{"y", "t", "g"}
				for j := 4; j <= atkExcelCols; j++ {
					names = append(names, "c"+strconv.Itoa(j))
				}
				rows := func(w io.Writer) error {
					var b []byte
					for i := int64(0); i < n; i++ {
						r := i + 2
						b = fmt.Appendf(b, `<row r="%d"><c r="A%d"><v>%d</v></c></row>`, r, r, i%97)
						if len(b) > 1<<20 {
							if _, err := w.Write(b); err != nil {
								return err
							}
							b = b[:0]
						}
					}
					_, err := w.Write(b)
					return err
				}
				sh := atkSeq(atkSheetStart+atkHeaderRow(names...), rows, atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{sheet: sh})(t, dir, n)
			},
		},
		{
			// One row of 2,000,000 cells without r, past Excel's 16,384
			// columns.
			name:  "row of 2M cells",
			n:     2_000_000,
			scale: true,
			make: func(t *testing.T, dir string, n int64) string {
				sh := atkSeq(atkSheetStart+`<row>`,
					func(w io.Writer) error { return atkRepeat(w, `<c><v>1</v></c>`, n) },
					`</row>`+atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{sheet: sh})(t, dir, n)
			},
		},
		{
			// A CSV of 1,000,000 columns (y, t, g, c4 … c1000000) and two
			// data rows: 1,000,000 rather than 2,000,000 keeps the file
			// under 20 MB (about 12 MB).
			name: "CSV 1M columns",
			n:    1_000_000,
			make: func(t *testing.T, dir string, n int64) string {
				ones := func(w io.Writer) error { return atkRepeat(w, ",1", n-3) }
				return atkFile(t, filepath.Join(dir, "wide.csv"), atkSeq("y,t,g", atkNames(4, n), "\n",
					atkCSVRow(0, "", ones), atkCSVRow(1, "", ones)))
			},
		},
		{
			// One shared string of 1 MiB starting with '#' (as the error
			// values do: #N/A, #REF!), used by n cells of a column "note"
			// beside valid data.
			name:  "'#' shared string of 1 MiB in 20,000 cells",
			n:     20_000,
			scale: true,
			make: func(t *testing.T, dir string, n int64) string {
				ss := atkSeq(atkDecl+`<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">`+atkSharedSmall+`<si><t>#`,
					func(w io.Writer) error { return atkRepeat(w, "x", 1<<20-1) },
					`</t></si></sst>`)
				rows := func(w io.Writer) error {
					for i := range int(n) {
						if _, err := io.WriteString(w, atkSharedRow(i, fmt.Sprintf(`<c r="D%d" t="s"><v>5</v></c>`, i+2))); err != nil {
							return err
						}
					}
					return nil
				}
				sh := atkSeq(atkSheetStart+atkSharedHeader, rows, atkSheetEnd)
				return atkValidBook("book.xlsx", atkBook{shared: ss, sheet: sh})(t, dir, n)
			},
		},
		{
			// A CSV with y, t and g and then 20,000 columns all named "x",
			// and three data rows.
			name:  "CSV 20,000 columns named x",
			n:     20_000,
			scale: true,
			make: func(t *testing.T, dir string, n int64) string {
				ones := func(w io.Writer) error { return atkRepeat(w, ",1", n) }
				return atkFile(t, filepath.Join(dir, "dup.csv"), atkSeq("y,t,g",
					func(w io.Writer) error { return atkRepeat(w, ",x", n) }, "\n",
					atkCSVRow(0, "", ones), atkCSVRow(1, "", ones), atkCSVRow(2, "", ones)))
			},
		},
		// Workbooks with no styles, an empty styles part and one without
		// fonts, written in place (no --dry-run): written, or refused
		// with a plain message, never "please report this".
		noStyle("no styles part, written", atkBook{noStyles: true}),
		noStyle("<styleSheet/> only, written", atkBook{styles: atkText(atkDecl + `<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"/>`)}),
		noStyle("styles without <fonts>, written", atkBook{styles: atkText(atkDecl + `<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs><cellXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/></cellXfs></styleSheet>`)}),
		{
			// Values of a number moderator that are not finite. A
			// command-line value is the command line's problem, so exit 2
			// (the documented status) is accepted here as well as 1.
			name: "--moderator-values NaN,Inf",
			make: atkValidBook("book.xlsx", atkBook{sheet: atkText(atkValidSheet(nil, func(i int) float64 { return float64(i % 7) }))}),
			args: []string{"analyze", "{file}", "--outcome", "y", "--treatment", "t", "--moderator", "g",
				"--moderator-values", "NaN,Inf", "--dry-run"},
			exits: []int{1, 2},
		},
		{
			// An outcome near 1e300, whose squares overflow float64.
			name: "outcome near 1e300",
			make: atkValidBook("book.xlsx", atkBook{sheet: atkText(atkValidSheet(func(i int) float64 {
				return 1e300 * (1 + float64((i*7)%11)/100 + 0.05*float64(atkT(i)))
			}, nil))}),
		},
		{
			// A CSV whose moderator holds one text of 1 MiB.
			name: "CSV moderator value of 1 MiB",
			make: func(t *testing.T, dir string, n int64) string {
				pieces := []any{"y,t,g\n", atkCSVRow(0, strings.Repeat("m", 1<<20), nil)}
				for i := 1; i < atkRows; i++ {
					pieces = append(pieces, atkCSVRow(i, "", nil))
				}
				return atkFile(t, filepath.Join(dir, "mod.csv"), atkSeq(pieces...))
			},
		},
		{
			// "slopewise data.xlsx" without a display: the build with the
			// window should say in one line that it needs a desktop
			// session and name the commands that work without one.
			name:   "window without a display",
			make:   atkValidBook("data.xlsx", atkBook{}),
			args:   []string{"{file}"},
			window: true,
			want:   `(?i)desktop`,
			check: func(t *testing.T, dir string, r *atkResult) {
				msg := strings.TrimSpace(r.stderr.String())
				if strings.Count(msg, "\n") > 0 {
					t.Errorf("%s: the message is %d lines, want one", r.name, strings.Count(msg, "\n")+1)
				}
				if !strings.Contains(msg, "analyze") {
					t.Errorf("%s: the message does not name the headless commands (analyze): %s", r.name, atkOneLine(msg, 300))
				}
			},
		},
		{
			// A CSV of 17,000 columns (past Excel's 16,384) and 50 rows,
			// written (its data copied into "<name> results.xlsx"): no
			// cell of the results may lie past column XFD.
			name:     "CSV 17,000 columns, written",
			n:        17_000,
			args:     []string{"analyze", "{file}", "--outcome", "y", "--treatment", "t", "--moderator", "g"},
			allowNew: `^wide results\.xlsx$`,
			make: func(t *testing.T, dir string, n int64) string {
				ones := func(w io.Writer) error { return atkRepeat(w, ",1", n-3) }
				pieces := []any{"y,t,g", atkNames(4, n), "\n"}
				for i := range 50 {
					pieces = append(pieces, atkCSVRow(i, "", ones))
				}
				return atkFile(t, filepath.Join(dir, "wide.csv"), atkSeq(pieces...))
			},
			check: func(t *testing.T, dir string, r *atkResult) {
				out := filepath.Join(dir, "wide results.xlsx")
				if _, err := os.Stat(out); err != nil {
					t.Logf("%s: no results workbook (exit %s)", r.name, r.exit)
					return
				}
				f, err := excelize.OpenFile(out)
				if err != nil {
					t.Errorf("%s: the results workbook does not open in excelize: %v", r.name, err)
					return
				}
				defer f.Close()
				for _, sh := range f.GetSheetList() {
					dim, _ := f.GetSheetDimension(sh)
					cols, err := f.GetCols(sh)
					if err != nil {
						t.Errorf("%s: sheet %q (dimension %q): %v", r.name, sh, dim, err)
						continue
					}
					if len(cols) > atkExcelCols {
						t.Errorf("%s: sheet %q (dimension %q) has %d columns, past XFD (%d)", r.name, sh, dim, len(cols), atkExcelCols)
					}
					t.Logf("%s: sheet %q: dimension %q, %d columns", r.name, sh, dim, len(cols))
				}
			},
		},
	}
}
