package delimited

import (
	"context"
	"errors"
	"strconv"
	"strings"
	"testing"

	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

func readText(t *testing.T, name, content string) (*table.Table, error) {
	t.Helper()
	return Read(context.Background(), iotest.WriteFile(t, t.TempDir(), name, []byte(content)), table.Options{})
}

func TestCSVSemicolonDecimalComma(t *testing.T) {
	// As a spreadsheet program set to a German locale saves "CSV UTF-8":
	// a byte order mark, ';' between fields, ',' before decimals and '.'
	// grouping thousands (common practice).
	content := "\uFEFFPerson;Group;Income;Note\r\n" +
		"1;A;1.234,50;\"first line\r\nsecond line\"\r\n" +
		"2;B;987,25;plain\r\n" +
		"\r\n" +
		"3;A;-12;\"with ; inside\"\r\n" +
		"4;B;NA;\r\n"
	tab, err := readText(t, "de.csv", content)
	if err != nil {
		t.Fatal(err)
	}
	if tab.Text.Delimiter != ';' || !tab.Text.DecimalComma || tab.Text.Encoding != "UTF-8" {
		t.Fatalf("sniffed %+v", tab.Text)
	}
	if tab.Columns[0].Name != "Person" {
		t.Errorf("BOM left in the first name: %q", tab.Columns[0].Name)
	}
	inc := tab.Column("Income")
	want := []float64{1234.5, 987.25, -12}
	for i, w := range want {
		if inc.Numbers[i] != w {
			t.Errorf("income %d = %v, want %v", i, inc.Numbers[i], w)
		}
	}
	if inc.Missing[3] != table.Marker {
		t.Errorf("NA read as %v", inc.Missing[3])
	}
	note := tab.Column("Note")
	if note.Texts[0] != "first line\nsecond line" || note.Texts[2] != "with ; inside" {
		t.Errorf("quoted fields %q", note.Texts)
	}
	// Rows as a spreadsheet program shows them: the quoted line break stays
	// in one row and the blank line keeps its row.
	if got := tab.CellRef(inc, 2); got != "cell C5" {
		t.Errorf("cell reference after a blank line: %q (rows %v)", got, tab.SourceRows)
	}
}

func TestCSVDelimiters(t *testing.T) {
	for name, content := range map[string]string{
		"comma.csv": "a,b,c\n1,2,x\n3,4,y\n5,6,x\n",
		"tab.tsv":   "a\tb\tc\n1\t2\tx\n3\t4\ty\n5\t6\tx\n",
		"pipe.txt":  "a|b|c\n1|2|x\n3|4|y\n5|6|x\n",
		"semi.csv":  "a;b;c\n1;2;x\n3;4;y\n5;6;x\n",
	} {
		tab, err := readText(t, name, content)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if len(tab.Columns) != 3 || tab.Column("b").Numbers[2] != 6 || tab.Column("c").Kind != table.YesNo {
			t.Errorf("%s: %d columns, %+v", name, len(tab.Columns), tab.Columns)
		}
	}
}

func TestCSVThousandsWithPointDecimals(t *testing.T) {
	tab, err := readText(t, "t.csv", "id,amount\n1,\"1,234.5\"\n2,\"12,000\"\n3,7.25\n")
	if err != nil {
		t.Fatal(err)
	}
	a := tab.Column("amount")
	if a.Kind != table.Number || a.Numbers[0] != 1234.5 || a.Numbers[1] != 12000 || a.Numbers[2] != 7.25 {
		t.Errorf("amounts %v (%v)", a.Numbers, a.Kind)
	}
}

func TestCSVWindows1252(t *testing.T) {
	// "Région" and "Zürich" in Windows-1252: é is 0xE9, ü is 0xFC (the code
	// page's published table, from memory).
	content := "id;R\xe9gion\n1;Z\xfcrich\n2;Gen\xe8ve\n3;Z\xfcrich\n4;Bern\n"
	tab, err := readText(t, "w.csv", content)
	if err != nil {
		t.Fatal(err)
	}
	if tab.Text.Encoding != "Windows-1252" || tab.Column("Région") == nil || tab.Column("Région").Texts[0] != "Zürich" {
		t.Fatalf("encoding %q, columns %+v", tab.Text.Encoding, tab.Columns)
	}
	if !strings.Contains(iotest.NoteTexts(tab), "read as Windows-1252") {
		t.Errorf("no note about the encoding: %s", iotest.NoteTexts(tab))
	}
}

func TestCSVUTF16(t *testing.T) {
	// UTF-16LE with a byte order mark, as "Unicode text" exports are.
	s := "a\tb\r\n1\t2\r\n3\t4\r\n"
	b := []byte{0xFF, 0xFE}
	for _, r := range s {
		b = append(b, byte(r), 0)
	}
	tab, err := Read(context.Background(), iotest.WriteFile(t, t.TempDir(), "u.txt", b), table.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if tab.Column("b") == nil || tab.Column("b").Numbers[1] != 4 {
		t.Errorf("UTF-16 table %+v", tab.Columns)
	}
}

func TestCSVRagged(t *testing.T) {
	// A short row is padded with blanks; a long one is refused with its line.
	tab, err := readText(t, "short.csv", "a,b,c\n1,2,3\n4,5\n6,7,8\n")
	if err != nil {
		t.Fatal(err)
	}
	if tab.Column("c").Missing[1] != table.Blank {
		t.Errorf("short row: %v", tab.Column("c").Missing)
	}
	_, err = readText(t, "long.csv", "a,b\n1,2\n3,4,5\n")
	var e *table.Error
	if !errors.As(err, &e) || !errors.Is(err, table.ErrRaggedRow) || e.Cell != "line 3" {
		t.Errorf("long row: %v", err)
	}
}

// TestEncodingScanFarDown puts the one byte that is neither UTF-8 nor
// Windows-1252 far below the first read, past many pure-ASCII blocks.
func TestEncodingScanFarDown(t *testing.T) {
	var b strings.Builder
	b.WriteString("id,name\n")
	for i := range 100_000 {
		b.WriteString(strconv.Itoa(i) + ",plain\n")
	}
	b.WriteString("7,caf\xc3\n8,\x81x\n")
	_, err := readText(t, "far.csv", b.String())
	if err == nil || !strings.Contains(err.Error(), "the first byte that fits neither is on line 100003") {
		t.Errorf("got %v", err)
	}
	for _, c := range []struct {
		s    string
		want bool
	}{{"", true}, {"abc", true}, {"abcdefgh", true}, {"abcdefgh\x80", false}, {"\xffabcdefgh", false}, {"abcdefghijklmnop\xc3\xa9", false}} {
		if got := isASCII([]byte(c.s)); got != c.want {
			t.Errorf("isASCII(%q) = %v", c.s, got)
		}
	}
}
