package save

import (
	"bytes"
	"context"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
	"slopewise/internal/io/xlsx"
)

// rewrittenParts are the parts excelize always re-serialises on save
// (excelize v2.11.1 source: excelize.go and file.go, writeToZip; the
// issue's list), compared as XML rather than byte by byte.
var rewrittenParts = map[string]bool{
	"xl/workbook.xml":            true,
	"xl/_rels/workbook.xml.rels": true,
	"[Content_Types].xml":        true,
	"xl/styles.xml":              true,
	"xl/theme/theme1.xml":        true,
	"xl/calcChain.xml":           true,
}

// xmlItems flattens an XML document into one string per element: its
// path, its attributes (sorted, with resolved namespaces) and its text.
func xmlItems(t testing.TB, body []byte) map[string]int {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(body))
	items := map[string]int{}
	var stack []string
	var text []string
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			return items
		}
		if err != nil {
			t.Fatal(err)
		}
		switch x := tok.(type) {
		case xml.StartElement:
			var attrs []string
			for _, a := range x.Attr {
				// Namespace declarations, and counts of children, which
				// grow with every addition.
				if a.Name.Space == "xmlns" || a.Name.Local == "xmlns" || a.Name.Local == "count" {
					continue
				}
				attrs = append(attrs, a.Name.Space+":"+a.Name.Local+"="+a.Value)
			}
			sort.Strings(attrs)
			stack = append(stack, x.Name.Space+":"+x.Name.Local+"["+strings.Join(attrs, ",")+"]")
			text = append(text, "")
		case xml.CharData:
			if len(text) > 0 {
				text[len(text)-1] += strings.TrimSpace(string(x))
			}
		case xml.EndElement:
			items[strings.Join(stack, "/")+"="+text[len(text)-1]]++
			stack, text = stack[:len(stack)-1], text[:len(text)-1]
		}
	}
}

// rawRows reads every sheet's raw values and formulas with excelize, a
// reader independent of ours.
func rawRows(t testing.TB, path string) map[string]string {
	t.Helper()
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string]string{}
	for _, s := range f.GetSheetList() {
		rows, err := f.GetRows(s, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		var b strings.Builder
		for r, row := range rows {
			for c, v := range row {
				ref, _ := excelize.CoordinatesToCellName(c+1, r+1)
				formula, _ := f.GetCellFormula(s, ref)
				fmt.Fprintf(&b, "%s=%q f=%q\n", ref, v, formula)
			}
		}
		out[s] = b.String()
	}
	return out
}

func TestWriteResultsRoundTrip(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "visits.xlsm")
	iotest.RichWorkbook(t, path)
	if err := os.Chmod(path, 0o640); err != nil {
		t.Fatal(err)
	}
	before := iotest.ZipParts(t, path)
	origHash := iotest.FileHash(t, path)
	rawBefore := rawRows(t, path)
	now := time.Date(2026, 3, 4, 5, 6, 7, 0, time.UTC)

	w, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Now: func() time.Time { return now }})
	if err != nil {
		t.Fatal(err)
	}
	if w.Path != path || w.Sheet != "Slopewise results" {
		t.Errorf("written %+v", w)
	}
	wantBackup := filepath.Join(dir, "visits (before Slopewise 2026-03-04 05.06.07).xlsm")
	if w.Backup != wantBackup || iotest.FileHash(t, wantBackup) != origHash {
		t.Errorf("backup %q is not the original", w.Backup)
	}
	// Windows keeps no Unix permission bits (only read-only or not).
	if info, err := os.Stat(path); err != nil || (runtime.GOOS != "windows" && info.Mode().Perm() != 0o640) {
		t.Errorf("permissions after writing: %v %v", info.Mode(), err)
	}
	after := iotest.ZipParts(t, path)
	for name, body := range before {
		got, ok := after[name]
		switch {
		case !ok:
			t.Errorf("part %s is gone", name)
		case rewrittenParts[name]:
			old, neu := xmlItems(t, body), xmlItems(t, got)
			for item, n := range old {
				if neu[item] < n {
					t.Errorf("part %s lost %q", name, item)
				}
			}
		case !bytes.Equal(body, got):
			t.Errorf("part %s changed", name)
		}
	}
	var added []string
	for name := range after {
		if _, ok := before[name]; !ok {
			added = append(added, name)
		}
	}
	sort.Strings(added)
	if want := "xl/drawings/_rels/drawing3.xml.rels xl/drawings/drawing3.xml xl/media/image2.png xl/worksheets/_rels/sheet5.xml.rels xl/worksheets/sheet5.xml"; strings.Join(added, " ") != want {
		t.Errorf("added parts %q, want %q", added, want)
	}
	rawAfter := rawRows(t, path)
	for s, v := range rawBefore {
		if rawAfter[s] != v {
			t.Errorf("sheet %s reads differently after writing", s)
		}
	}
	res := rawAfter["Slopewise results"]
	for _, want := range []string{
		`B3="0.12345678901234566"`, // every digit of the float64 is kept
		`D3="0.000123456789"`,
		`B4="-1234567.890123"`,
		`A1="Effect of the programme by group"`,
	} {
		if !strings.Contains(res, want) {
			t.Errorf("results sheet lacks %s:\n%s", want, res)
		}
	}
	spec, err := ReadSpec(path, "Slopewise results")
	if err != nil || string(spec) != `{"sheet":"Visits","header_row":1,"outcome":"Score"}` {
		t.Errorf("spec read back %q, %v", spec, err)
	}
	// The data sheet still reads as before through our own reader.
	tab, err := Read(context.Background(), path, table.Options{Sheet: "Visits"})
	if err != nil || tab.Column("Score").Numbers[0] != 0.1234567 {
		t.Fatalf("reading the data back: %v", err)
	}

	// A second run with Replace replaces its own sheet; without, it adds one.
	hash1 := iotest.FileHash(t, path)
	now = now.Add(time.Minute)
	w2, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Replace: true, Now: func() time.Time { return now }})
	if err != nil {
		t.Fatal(err)
	}
	sheets, _ := xlsx.Sheets(path)
	if w2.Sheet != "Slopewise results" || len(sheets) != 5 || iotest.FileHash(t, w2.Backup) != hash1 {
		t.Errorf("replace: %+v, %d sheets", w2, len(sheets))
	}
	now = now.Add(time.Minute)
	w3, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Now: func() time.Time { return now }})
	if err != nil {
		t.Fatal(err)
	}
	if w3.Sheet != "Slopewise results (2)" {
		t.Errorf("second sheet named %q", w3.Sheet)
	}
	if got := rawRows(t, path); got["Visits"] != rawBefore["Visits"] || got["Lookup"] != rawBefore["Lookup"] {
		t.Error("data sheets changed after three writes")
	}
}

func TestWriteCopyKeepsSource(t *testing.T) {
	dir := t.TempDir()
	src := filepath.Join(dir, "book.xlsx")
	iotest.RichWorkbook(t, src)
	h := iotest.FileHash(t, src)
	dst := filepath.Join(dir, "copy.xlsx")
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{CopyTo: dst})
	if err != nil {
		t.Fatal(err)
	}
	if iotest.FileHash(t, src) != h || w.Backup != "" || w.Path != dst {
		t.Errorf("source changed or unexpected backup: %+v", w)
	}
	if _, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{CopyTo: dst}); !errors.Is(err, table.ErrTargetExists) {
		t.Errorf("second copy onto the first: %v", err)
	}
	if _, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{CopyTo: src}); !errors.Is(err, table.ErrSameFile) {
		t.Errorf("copy onto the source: %v", err)
	}
}

func TestWriteBesideCSV(t *testing.T) {
	dir := t.TempDir()
	src := iotest.WriteFile(t, dir, "survey.csv", []byte("id;score;group\n1;1,25;A\n\n2;0,12345678901234567;B\n"))
	h := iotest.FileHash(t, src)
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if w.Path != filepath.Join(dir, "survey results.xlsx") || iotest.FileHash(t, src) != h {
		t.Fatalf("written %+v; the CSV must stay as it was", w)
	}
	rows := rawRows(t, w.Path)
	for _, want := range []string{`B2="1.25"`, `B4="0.12345678901234566"`, `C4="B"`} {
		if !strings.Contains(rows[DataSheetName], want) {
			t.Errorf("data sheet lacks %s:\n%s", want, rows[DataSheetName])
		}
	}
	if !strings.Contains(rows["Slopewise results"], `A1="Effect of the programme by group"`) {
		t.Errorf("no results sheet: %v", rows)
	}
	// The data sheet reads back as the CSV did, with the same cell references.
	a, err := Read(context.Background(), src, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Read(context.Background(), w.Path, table.Options{Sheet: DataSheetName})
	if err != nil {
		t.Fatal(err)
	}
	if a.CellRef(a.Column("score"), 1) != "cell B4" || b.Column("score").Numbers[1] != a.Column("score").Numbers[1] {
		t.Errorf("CSV and its data sheet differ: %v vs %v", a.Column("score").Numbers, b.Column("score").Numbers)
	}
	if _, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{}); !errors.Is(err, table.ErrTargetExists) {
		t.Errorf("second run without replace: %v", err)
	}
	w2, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{Replace: true})
	if err != nil || w2.Backup == "" {
		t.Errorf("second run with replace: %+v %v", w2, err)
	}
}

// A text file over the line limit keeps its data to itself by default:
// the workbook beside it holds the results sheet only, and says so; asked
// for, the copy is made whatever the size; asked not to, never.
func TestWriteBesideCSVCopyData(t *testing.T) {
	cases := []struct {
		name     string
		copyData CopyData
		lines    int // CopyDataLines
		data     bool
		notCopy  int
	}{
		{"auto, under the limit", CopyDataAuto, 5, true, 0},
		{"auto, at the limit", CopyDataAuto, 4, true, 0},
		{"auto, over the limit", CopyDataAuto, 3, false, 4},
		{"yes, over the limit", CopyDataAlways, 3, true, 0},
		{"no, under the limit", CopyDataNever, 5, false, -1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			// four lines, the last without a line break
			src := iotest.WriteFile(t, dir, "survey.csv", []byte("id,score\n1,2.5\n2,3.5\n3,4.5"))
			w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{CopyData: c.copyData, CopyDataLines: c.lines})
			if err != nil {
				t.Fatal(err)
			}
			if w.DataNotCopied != c.notCopy {
				t.Errorf("DataNotCopied = %d, want %d", w.DataNotCopied, c.notCopy)
			}
			rows := rawRows(t, w.Path)
			if _, ok := rows[DataSheetName]; ok != c.data {
				t.Errorf("data sheet there: %v, want %v (sheets %v)", ok, c.data, len(rows))
			}
			if c.data && !strings.Contains(rows[DataSheetName], `B4="4.5"`) {
				t.Errorf("data sheet: %s", rows[DataSheetName])
			}
			if !strings.Contains(rows["Slopewise results"], `A1="Effect of the programme by group"`) || len(rows) != map[bool]int{true: 2, false: 1}[c.data] {
				t.Errorf("sheets: %v", rows)
			}
		})
	}
}

func TestCountLines(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		text       string
		most, want int
	}{{"", 10, 0}, {"a", 10, 1}, {"a\n", 10, 1}, {"a\nb", 10, 2}, {"a\r\nb\r\n", 10, 2}, {"a\nb\nc\nd\n", 2, 3}} {
		got, err := countLines(iotest.WriteFile(t, dir, "f.csv", []byte(c.text)), c.most)
		if err != nil || got != c.want {
			t.Errorf("countLines(%q, %d) = %d, %v; want %d", c.text, c.most, got, err, c.want)
		}
	}
}

func TestWriteCopyOfWorkbookWithLostFeature(t *testing.T) {
	dir := t.TempDir()
	src := iotest.WithWorkbookXML(`<fileSharing readOnlyRecommended="1"/>`).Write(t, dir, "shared.xlsx")
	h := iotest.FileHash(t, src)
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{CopyTo: filepath.Join(dir, "shared copy.xlsx")})
	if err != nil {
		t.Fatal(err)
	}
	if len(w.Lost) != 1 || w.Lost[0] != "a read-only recommendation or a password to modify" || iotest.FileHash(t, src) != h {
		t.Errorf("copy: %+v", w)
	}
}

func TestReplaceFailureIsNamed(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "book.xlsx")
	info, err := os.Stat(dir)
	if err != nil {
		t.Fatal(err)
	}
	err = replaceFile(filepath.Join(dir, "missing.tmp"), target, 0o644, info)
	if !errors.Is(err, table.ErrCannotReplace) || !strings.HasPrefix(err.Error(), fmt.Sprintf("%q: ", target)) {
		t.Errorf("rename failure: %v", err)
	}
}

func TestWriteThroughSymlink(t *testing.T) {
	dir := t.TempDir()
	real := iotest.SimpleBook().Write(t, dir, "real.xlsx")
	link := filepath.Join(dir, "link.xlsx")
	if err := os.Symlink(real, link); err != nil {
		t.Skip("no symbolic links here")
	}
	if os.Getenv("SLOPEWISE_UNDER_WINE") != "" {
		// Wine 8 makes a link that its own file calls do not follow.
		t.Skip("Wine's symbolic links are not Windows'")
	}
	if _, err := WriteResults(link, iotest.ResultsGrid(t), WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Error("the link was replaced by a file")
	}
	if sheets, _ := xlsx.Sheets(real); len(sheets) != 2 {
		t.Errorf("the linked file has sheets %v", sheets)
	}
}

func TestWorkbookChangedMeanwhile(t *testing.T) {
	dir := t.TempDir()
	path := iotest.SimpleBook().Write(t, dir, "busy.xlsx")
	saved := iotest.VisitsBook().Bytes(t) // what another program saved meanwhile
	beforeReplace = func(p string) {
		if err := os.WriteFile(p, saved, 0o644); err != nil {
			t.Error(err)
		}
	}
	defer func() { beforeReplace = func(string) {} }()
	_, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
	want := fmt.Sprintf("%q: %s (another program saved it while the results were being written)", path, table.ErrChangedSinceRead)
	if !errors.Is(err, table.ErrChangedSinceRead) || err.Error() != want {
		t.Errorf("got %v\nwant %s", err, want)
	}
	if iotest.FileHash(t, path) != iotest.SHA(saved) {
		t.Error("the other program's save was overwritten")
	}
}

// TestExchangeSwaps: where the system offers it (Linux's RENAME_EXCHANGE,
// Windows' ReplaceFileW), exchange leaves each file's content at the other
// name and nothing else in the folder; twice, each is back.
func TestExchangeSwaps(t *testing.T) {
	if exchange("", "") == errNoExchange {
		t.Skip("this system has no atomic exchange")
	}
	dir := t.TempDir()
	a, b := filepath.Join(dir, ".b.xlsx.slopewise-1.tmp"), filepath.Join(dir, "b.xlsx")
	if err := os.WriteFile(a, []byte("new"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(b, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	for i, want := range [][2]string{{"old", "new"}, {"new", "old"}} {
		if err := exchange(a, b); err != nil {
			t.Fatalf("exchange %d: %v", i+1, err)
		}
		ga, _ := os.ReadFile(a)
		gb, _ := os.ReadFile(b)
		if string(ga) != want[0] || string(gb) != want[1] {
			t.Errorf("after exchange %d: %q holds %q, %q holds %q", i+1, a, ga, b, gb)
		}
		if names, _ := os.ReadDir(dir); len(names) != 2 {
			t.Errorf("after exchange %d the folder holds %d files", i+1, len(names))
		}
	}
}

// TestEditAtTheExchange: another program saves the workbook in the
// instant after the last check, when the new workbook has been swapped
// in (Linux's RENAME_EXCHANGE): the swap is undone, the other program's
// version is in place, no backup of the version analysed is left, and
// the save is refused.
func TestEditAtTheExchange(t *testing.T) {
	if exchange("", "") == errNoExchange {
		t.Skip("this system has no atomic exchange")
	}
	dir := t.TempDir()
	path := iotest.SimpleBook().Write(t, dir, "busy.xlsx")
	saved := iotest.VisitsBook().Bytes(t)
	calls := 0
	afterExchange = func(swappedOut string) {
		calls++
		// The other program writes where the workbook is now; a real
		// program's save lands in the moment before the exchange, which
		// this stands for: the file swapped out is not the one analysed.
		if err := os.WriteFile(swappedOut, saved, 0o644); err != nil {
			t.Error(err)
		}
	}
	defer func() { afterExchange = func(string) {} }()
	_, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{})
	if !errors.Is(err, table.ErrChangedSinceRead) || calls != 1 {
		t.Fatalf("got %v after %d exchange(s)", err, calls)
	}
	if iotest.FileHash(t, path) != iotest.SHA(saved) {
		t.Error("the other program's version is not in place")
	}
	if names, _ := os.ReadDir(dir); len(names) != 1 {
		t.Errorf("left in the folder: %v", names)
	}
}

// TestWriteBesideCSVPointInCommaFile: in a decimal-comma file "1.5" is no
// number (the point groups thousands), so the copy keeps it as the text
// it is; a workbook has no decimal comma, and reading the copy takes it
// for a number stored as text (the limit noted in pointOnlyColumns).
func TestWriteBesideCSVPointInCommaFile(t *testing.T) {
	dir := t.TempDir()
	src := iotest.WriteFile(t, dir, "mixed.csv", []byte("id;v\n1;1,5\n2;1.5\n3;2,25\n"))
	a, err := Read(context.Background(), src, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if v := a.Column("v"); v.Kind != table.Number || v.Missing[1] != table.TextInNumbers {
		t.Fatalf("the CSV's column v: %v, reasons %v", v.Kind, v.Missing)
	}
	w, err := WriteResults(src, iotest.ResultsGrid(t), WriteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	rows := rawRows(t, w.Path)
	for _, want := range []string{`B2="1.5"`, `B3="1.5"`, `B4="2.25"`} {
		if !strings.Contains(rows[DataSheetName], want) {
			t.Errorf("data sheet lacks %s:\n%s", want, rows[DataSheetName])
		}
	}
}

// TestSameBackupNotCopiedTwice: results added, the original put back (its
// bytes return), results added again: the second save's backup is the
// first one, not a second copy of the same bytes; a workbook with other
// bytes gets a backup of its own. Names with the characters a file
// pattern gives a meaning to ("[", "*") are matched as they are.
func TestSameBackupNotCopiedTwice(t *testing.T) {
	for _, name := range []string{"visits.xlsx", "visits [2026]*.xlsx"} {
		if runtime.GOOS == "windows" && strings.Contains(name, "*") {
			continue
		}
		dir := t.TempDir()
		path := filepath.Join(dir, name)
		iotest.RichWorkbook(t, path)
		orig, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		clock := time.Date(2026, 3, 4, 5, 6, 7, 0, time.UTC)
		opts := WriteOptions{Now: func() time.Time { clock = clock.Add(time.Minute); return clock }}
		first, err := WriteResults(path, iotest.ResultsGrid(t), opts)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, orig, 0o644); err != nil { // put back
			t.Fatal(err)
		}
		second, err := WriteResults(path, iotest.ResultsGrid(t), opts)
		if err != nil {
			t.Fatal(err)
		}
		if second.Backup != first.Backup {
			t.Errorf("%s: a second backup %q of the same bytes as %q", name, second.Backup, first.Backup)
		}
		third, err := WriteResults(path, iotest.ResultsGrid(t), WriteOptions{Now: opts.Now, Replace: true})
		if err != nil {
			t.Fatal(err)
		}
		if third.Backup == first.Backup || iotest.FileHash(t, third.Backup) == iotest.FileHash(t, first.Backup) {
			t.Errorf("%s: the workbook with results has no backup of its own: %q", name, third.Backup)
		}
		backups, _ := filepath.Glob(filepath.Join(dir, "*before Slopewise*"))
		if len(backups) != 2 {
			t.Errorf("%s: backups %v", name, backups)
		}
	}
}
