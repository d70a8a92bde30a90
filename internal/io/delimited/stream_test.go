package delimited

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// TestStreamMatchesRead checks, on generated files, that a streamed read
// gives every column the kind, levels and distinct values Read gives it,
// and every cell Read's value, text and missing reason.
func TestStreamMatchesRead(t *testing.T) {
	// Batches of a few rows, so that the survey's read-ahead crosses
	// batches often.
	defer func(n int) { aheadRows = n }(aheadRows)
	aheadRows = 5
	// Few texts kept once, so that replays write most texts out whole.
	defer func(n int) { internLimit = n }(internLimit)
	internLimit = 3
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(3, 9))
	for n := 0; n < 60; n++ {
		delim := []string{",", ";", "\t"}[n%3]
		path := filepath.Join(dir, fmt.Sprintf("messy-%d.csv", n))
		if err := os.WriteFile(path, iotest.MessyCSV(rng, 20+rng.IntN(400), delim), 0o644); err != nil {
			t.Fatal(err)
		}
		compareStream(t, path, table.Options{})
		compareStream(t, path, table.Options{HeaderRow: 1})
	}
}

func compareStream(t *testing.T, path string, opts table.Options) {
	t.Helper()
	want, werr := Read(context.Background(), path, opts)
	s, serr := OpenStream(context.Background(), path, opts)
	if werr != nil || serr != nil {
		if werr == nil {
			t.Errorf("%s: Read read it, OpenStream says %v", path, serr)
		}
		return
	}
	if s.Rows != want.Len() || s.Outline.HeaderRow != want.HeaderRow || len(s.Outline.Columns) != len(want.Columns) {
		t.Fatalf("%s: stream %d rows, header %d, %d columns; Read %d, %d, %d", path, s.Rows, s.Outline.HeaderRow,
			len(s.Outline.Columns), want.Len(), want.HeaderRow, len(want.Columns))
	}
	var names []string
	for i, wc := range want.Columns {
		oc := s.Outline.Columns[i]
		if oc.Name != wc.Name || oc.Kind != wc.Kind || !reflect.DeepEqual(oc.Levels, wc.Levels) || !reflect.DeepEqual(oc.Distinct, wc.Distinct) {
			t.Fatalf("%s: column %d: stream %q %v %q %v, Read %q %v %q %v", path, i, oc.Name, oc.Kind, oc.Levels, oc.Distinct,
				wc.Name, wc.Kind, wc.Levels, wc.Distinct)
		}
		names = append(names, wc.Name)
	}
	defer s.Close()
	// The first pass parses the file and keeps a replay; the second plays
	// it back; both must give Read's cells.
	for pass := range 2 {
		if pass == 1 && !s.replay.matches(names, 7) {
			t.Fatalf("%s: no replay after the first pass", path)
		}
		comparePass(t, s, want, names, path)
	}
}

func comparePass(t *testing.T, s *Stream, want *table.Table, names []string, path string) {
	t.Helper()
	at := 0
	err := s.Pass(context.Background(), names, 7, func(rows []int, cols []*table.Column) error {
		for r, num := range rows {
			i := at + r
			if num != want.SourceRows[i] {
				return fmt.Errorf("data row %d is row %d, Read says %d", i, num, want.SourceRows[i])
			}
			for j, c := range cols {
				wc := want.Columns[j]
				var wn float64 = math.NaN()
				if wc.Numbers != nil && wc.Kind != table.YesNo && wc.Kind != table.Category && wc.Kind != table.Text {
					wn = wc.Numbers[i]
				}
				var gn float64 = math.NaN()
				if c.Kind == table.Number || c.Kind == table.Date {
					gn = c.Numbers[r]
				}
				if !(gn == wn || math.IsNaN(gn) && math.IsNaN(wn)) || c.Missing[r] != wc.Missing[i] {
					return fmt.Errorf("row %d, column %q: %v (%v), Read %v (%v)", num, wc.Name, gn, c.Missing[r], wn, wc.Missing[i])
				}
				if wc.Texts != nil && c.Texts[r] != wc.Texts[i] {
					return fmt.Errorf("row %d, column %q: %q, Read %q", num, wc.Name, c.Texts[r], wc.Texts[i])
				}
			}
		}
		at += len(rows)
		return nil
	})
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}

// TestScannerMatchesCSV checks the fast scanner against encoding/csv
// (through textSource) on generated files and on the fuzz seeds: the same
// rows, row numbers and cells, and a refusal exactly where encoding/csv
// reports an error.
func TestScannerMatchesCSV(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	inputs := [][]byte{
		[]byte("a,b\n1,2\n"), []byte("a,b\r\n\r\n1,\"x\r\ny\"\r\n"), []byte("a,\"b\n\nc\",d\n\n\n1,2,3"),
		[]byte("a,b\n1,\"2\"x\n"), []byte("a,b\n1,2\"\n"), []byte("a\n\"open"), []byte("a,b\r"), []byte("\"\"\"\",\"\"\n,,\n"),
	}
	for range 40 {
		inputs = append(inputs, iotest.MessyCSV(rng, 50, ","))
	}
	for i, in := range inputs {
		compareScanner(t, fmt.Sprintf("input %d", i), in)
	}
}

// FuzzScanner compares the fast scanner with encoding/csv on any input.
func FuzzScanner(f *testing.F) {
	f.Add([]byte("a,b\n1,\"2\n3\"\n\n4,5\r\n"))
	f.Add([]byte("x;y\n\"a\"\"b\";c\n"))
	f.Fuzz(func(t *testing.T, in []byte) {
		compareScanner(t, "fuzz", in)
	})
}

func compareScanner(t *testing.T, name string, in []byte) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "in.csv")
	if err := os.WriteFile(path, in, 0o644); err != nil {
		t.Fatal(err)
	}
	tf, err := SniffText(path)
	if err != nil {
		return
	}
	std, _, err := openText(path)
	if err != nil {
		t.Fatal(err)
	}
	defer std.Close()
	fast, err := OpenScanner(path, tf)
	if err != nil {
		t.Fatal(err)
	}
	defer fast.Close()
	for rec := 0; ; rec++ {
		n1, c1, e1 := std.Next()
		n2, c2, e2 := fast.Next()
		if e1 != nil || e2 != nil {
			if (e1 == io.EOF) != (e2 == io.EOF) || (e1 == nil) != (e2 == nil) {
				t.Fatalf("%s, record %d: encoding/csv says %v, the scanner %v", name, rec, e1, e2)
			}
			if e2 != nil && e2 != io.EOF && !errors.Is(e2, errScannerRefused) {
				t.Fatalf("%s, record %d: the scanner fails with %v", name, rec, e2)
			}
			return
		}
		if n1 != n2 || !reflect.DeepEqual(c1, c2) {
			t.Fatalf("%s, record %d: encoding/csv row %d %+v, the scanner row %d %+v", name, rec, n1, c1, n2, c2)
		}
	}
}

// TestPlainDecimal checks the fast path of parseNumber against
// strconv.ParseFloat on random decimals of up to 15 digits.
func TestPlainDecimal(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 1))
	for range 200000 {
		digits := 1 + rng.IntN(15)
		var b strings.Builder
		if rng.IntN(3) == 0 {
			b.WriteByte('-')
		}
		point := rng.IntN(digits + 1)
		for i := 0; i < digits; i++ {
			if i == point && i > 0 {
				b.WriteByte('.')
			}
			b.WriteByte(byte('0' + rng.IntN(10)))
		}
		s := b.String()
		got, ok := table.PlainDecimal(s, false)
		want, err := strconv.ParseFloat(s, 64)
		if !ok || err != nil || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("%q: %v %v, strconv %v %v", s, got, ok, want, err)
		}
	}
}

// TestStreamFileChanged checks that a pass over a file saved again since
// the survey stops with ErrChangedWhileRead.
func TestStreamFileChanged(t *testing.T) {
	path := filepath.Join(t.TempDir(), "visits.csv")
	if err := os.WriteFile(path, []byte("a,b\n1,2\n3,4\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := OpenStream(context.Background(), path, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte("a,b\n1,2\n3,4\n5,6\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	err = s.Pass(context.Background(), []string{"a"}, 10, func([]int, []*table.Column) error { return nil })
	if !errors.Is(err, ErrChangedWhileRead) {
		t.Errorf("got %v, want ErrChangedWhileRead", err)
	}
}

// frameEnd is where the k-th chunk of a replay file ends: each is its
// length (uvarint), its bytes and four bytes of CRC-32C.
func frameEnd(t *testing.T, f *os.File, k int) int64 {
	t.Helper()
	end := int64(0)
	for range k {
		var head [binary.MaxVarintLen64]byte
		if _, err := f.ReadAt(head[:], end); err != nil && err != io.EOF {
			t.Fatal(err)
		}
		n, h := binary.Uvarint(head[:])
		if h <= 0 {
			t.Fatalf("no chunk length at %d", end)
		}
		end += int64(h) + int64(n) + 4
	}
	return end
}

// TestReplayFallsBack checks the replay's edges: a first pass that ends
// early keeps none; a pass over other columns parses the file; a replay
// that does not read back (a damaged temporary file) is dropped and the
// pass parses the file, giving Read's cells all the same.
func TestReplayFallsBack(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(5, 5))
	path := filepath.Join(dir, "messy.csv")
	var want *table.Table
	for want == nil { // a messy file that reads (some have ragged rows)
		if err := os.WriteFile(path, iotest.MessyCSV(rng, 300, ","), 0o644); err != nil {
			t.Fatal(err)
		}
		want, _ = Read(context.Background(), path, table.Options{})
	}
	s, err := OpenStream(context.Background(), path, table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	var names []string
	for _, c := range want.Columns {
		names = append(names, c.Name)
	}
	stop := errors.New("stop")
	if err := s.Pass(context.Background(), names, 7, func([]int, []*table.Column) error { return stop }); err != stop {
		t.Fatalf("stopped pass: %v", err)
	}
	if s.replay != nil {
		t.Fatal("a pass that ended early kept a replay")
	}
	comparePass(t, s, want, names, path)
	if !s.replay.matches(names, 7) || s.replay.matches(names[:1], 7) || s.replay.matches(names, 8) {
		t.Fatal("the replay does not match the pass it recorded, or matches another")
	}
	if s.replay.path != "" {
		t.Errorf("the replay file %s was not removed while open", s.replay.path)
	}
	chunks := 0
	if err := s.Pass(context.Background(), names[:1], 7, func([]int, []*table.Column) error { chunks++; return nil }); err != nil || chunks != (want.Len()+6)/7 {
		t.Fatalf("a pass over one column: %d chunks, %v", chunks, err)
	}
	// A replayed pass stops when asked, as a parsed one does.
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	chunks = 0
	if err := s.Pass(ctx, names, 7, func([]int, []*table.Column) error { chunks++; return nil }); !errors.Is(err, table.ErrCancelled) || chunks != 0 {
		t.Fatalf("a cancelled replay: %d chunks, %v", chunks, err)
	}
	// Damage the replay: cut it in the middle of a chunk, where a chunk
	// ends, and flip one bit in the middle.
	chunkEnd := int64(0)
	for _, cut := range []string{"middle", "end of a chunk", "flipped bit"} {
		info, err := s.replay.f.Stat()
		if err != nil {
			t.Fatal(err)
		}
		size := info.Size() / 2
		switch cut {
		case "end of a chunk":
			size = chunkEnd
		case "flipped bit":
			b := make([]byte, 1)
			if _, err := s.replay.f.ReadAt(b, size); err != nil {
				t.Fatal(err)
			}
			b[0] ^= 0x10
			if _, err := s.replay.f.WriteAt(b, size); err != nil {
				t.Fatal(err)
			}
			size = info.Size()
		}
		if err := s.replay.f.Truncate(size); err != nil {
			t.Fatal(err)
		}
		comparePass(t, s, want, names, path)
		if s.replay != nil {
			t.Fatalf("cut at the %s: the damaged replay was kept", cut)
		}
		comparePass(t, s, want, names, path) // records anew
		if !s.replay.matches(names, 7) {
			t.Fatal("no new replay after a damaged one")
		}
		chunkEnd = frameEnd(t, s.replay.f, 2)
	}
	comparePass(t, s, want, names, path)
}

// TestAheadMatchesScanner reads files through the read-ahead and the
// scanner alone: the same rows, cells and end, with batches cut by rows
// and by bytes (a cell of 5 MB, more than a batch holds).
func TestAheadMatchesScanner(t *testing.T) {
	dir := t.TempDir()
	big := strings.Repeat("x", 5<<20)
	for n, text := range []string{
		"a,b,c\n1,,3\n,,\n\n4,5,6\n\"q\nr\",7,8",
		"a,b\n1," + big + "\n2,3\n" + big + ",4\n5,6\n",
	} {
		path := filepath.Join(dir, fmt.Sprintf("f%d.csv", n))
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		tf, err := SniffText(path)
		if err != nil {
			t.Fatal(err)
		}
		one, err := OpenScanner(path, tf)
		if err != nil {
			t.Fatal(err)
		}
		two, err := OpenScanner(path, tf)
		if err != nil {
			t.Fatal(err)
		}
		ahead := newAheadSource(two)
		for row := 0; ; row++ {
			n1, c1, e1 := one.Next()
			n2, c2, e2 := ahead.Next()
			if n1 != n2 || !reflect.DeepEqual(c1, c2) || (e1 == nil) != (e2 == nil) {
				t.Fatalf("file %d, row %d: scanner %d %v %v; read-ahead %d %v %v", n, row, n1, len(c1), e1, n2, len(c2), e2)
			}
			if e1 != nil {
				if e1 != io.EOF || e2 != io.EOF {
					t.Fatalf("file %d: ends with %v and %v", n, e1, e2)
				}
				break
			}
		}
		one.Close()
		ahead.Close()
	}
}
