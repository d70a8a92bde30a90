package xlsx

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
	"slopewise/internal/io/iotest"
	"slopewise/internal/io/table"
)

// calcInputs are the values of columns A and B, row by row, and of C
// (text, blank or a number).
var calcInputs = []struct {
	a, b float64
	c    any
}{
	{2.5, -2.5, "text"}, {-7, 3, nil}, {0, 4, 1.5}, {0.1, 0.2, ""}, {2.675, 100, "x"},
	{-0.125, 0, 7}, {1e10, 3e-7, nil}, {123456.789, -0.001, "n/a"}, {-3.5, 2, 0}, {1.005, 1.005, nil},
	{45000.25, 1, 2}, {-1e-5, 12, nil},
}

// calcFormulas are the formulas checked, by column; {r} is the row.
var calcFormulas = []string{
	"A{r}+B{r}*2-A{r}/3", "A{r}/B{r}", "A{r}^2", "ABS(A{r})^0.5", "2^-3+A{r}", "ROUND(A{r}*B{r},2)", "ROUND(A{r},-1)",
	"INT(A{r})", "MOD(A{r},3)", "ABS(A{r})", "SQRT(ABS(A{r}))", "EXP(A{r}/100000)", "LN(ABS(A{r})+1)",
	"LOG10(ABS(A{r})+1)", "IF(A{r}>B{r},A{r},B{r})", "AND(A{r}>0,B{r}>0)", "OR(A{r}>0,B{r}>0)", "NOT(A{r}>0)",
	"SUM(A{r}:C{r})", "AVERAGE(A{r}:C{r})", "MIN(A{r}:C{r})", "MAX(A{r}:C{r})", "COUNT(A{r}:C{r})",
	"PRODUCT(A{r}:B{r})", "25%*A{r}", "-A{r}^2", "A{r}=B{r}", "SUM(A{r},B{r},1)", "LN(A{r})",
	"IF(A{r}<0,\"neg\",\"pos\")", "ROUND(A{r},2)", "SUM(B{r},C{r})", "ROUND(2.675,2)+0*A{r}",
	"E{r}*2+F{r}", "IF(OR(A{r}>1,B{r}>1),MAX(A{r},B{r}),MIN(A{r},B{r}))", "MOD(A{r},-0.3)",
	"(A{r}+B{r})*(A{r}-B{r})", "A{r}>=B{r}", "A{r}<>B{r}", "IF(A{r}>0,A{r},NA())", "NA()",
}

// calcRefused are formulas Slopewise must refuse (in every row where the
// reason applies), each for a difference between excelize and LibreOffice
// seen in this test, or for a function it does not calculate.
var calcRefused = []struct{ formula, why string }{
	{"A{r}&\"-\"&B{r}", "joins values into text with &"}, // 1e+10 against 10000000000
	{"IF(D{r}=\"\",1,2)", "uses the empty cell"},         // excelize: blank <> ""
	{"D{r}", "uses the empty cell"},                      // excelize: an empty result, not 0
	{"SUM(A{r}:B{r},$D$2)", "adds up TRUE/FALSE values"}, // LibreOffice counts D2's TRUE as 1
	{"INDIRECT(\"A{r}\")", "uses INDIRECT"},
	{"Sheet2!A1", "refers to another sheet"},
	{"10^-A{r}*0+ROUND(A{r}/7,5)", "raises to a power that is not a number"}, // LibreOffice: #NUM! where 10^-A underflows, excelize 0
	{"POWER(A{r},2)", "uses POWER"},
	{"A{r}:B{r}", "uses the range"},
}

// TestCalcAgainstLibreOffice checks every formula Slopewise calculates
// against LibreOffice (Debian 12's 7.4, headless conversion to CSV, which
// calculates formulas that have no saved result): the same number to
// 1e-13 relative (both write 15 significant digits), the same error, the
// same TRUE/FALSE or text. A formula Slopewise refuses is listed as such.
func TestCalcAgainstLibreOffice(t *testing.T) {
	bin := iotest.Soffice(t)
	f := excelize.NewFile()
	const s = "Sheet1"
	heads := []string{"a", "b", "c", "spacer"}
	for i := range calcFormulas {
		heads = append(heads, fmt.Sprintf("f%d", i+1))
	}
	f.SetCellValue(s, "D2", true)
	var formulas []string
	formulas = append(formulas, calcFormulas...)
	for _, r := range calcRefused {
		formulas = append(formulas, r.formula)
	}
	for i := len(calcFormulas); i < len(formulas); i++ {
		heads = append(heads, fmt.Sprintf("f%d", i+1))
	}
	for i, h := range heads {
		f.SetCellValue(s, table.ColumnLetter(i)+"1", h)
	}
	for i, in := range calcInputs {
		r := strconv.Itoa(i + 2)
		f.SetCellValue(s, "A"+r, in.a)
		f.SetCellValue(s, "B"+r, in.b)
		if in.c != nil {
			f.SetCellValue(s, "C"+r, in.c)
		}
		for j, fm := range formulas {
			if err := f.SetCellFormula(s, table.ColumnLetter(4+j)+r, strings.ReplaceAll(fm, "{r}", r)); err != nil {
				t.Fatal(err)
			}
		}
	}
	path := filepath.Join(t.TempDir(), "calc.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	tab, err := Read(context.Background(), path, table.Options{HeaderRow: 1})
	if err != nil {
		t.Fatal(err)
	}
	lo := iotest.SheetAsCSV(t, bin, path, 1)
	checked, refused := 0, 0
	for j, fm := range formulas {
		col := tab.Column(fmt.Sprintf("f%d", j+1))
		if col == nil {
			t.Fatalf("no column for %s", fm)
		}
		if j < len(calcFormulas) && col.Formulas.Missing > 0 {
			t.Errorf("%s: %d cells not calculated: %s", fm, col.Formulas.Missing, col.Formulas.Why)
			continue
		}
		if j >= len(calcFormulas) {
			why := calcRefused[j-len(calcFormulas)].why
			if col.Formulas.Missing == 0 || !strings.Contains(col.Formulas.Why, why) {
				t.Errorf("%s: %d cells refused (%s); want some refused because it %s", fm, col.Formulas.Missing, col.Formulas.Why, why)
			}
			refused += col.Formulas.Missing
		}
		for i := range calcInputs {
			want := lo[i+1][4+j]
			got := cellShown(col, i)
			if col.Missing[i] == table.NoCachedValue {
				continue
			}
			if !sameResult(got, want) {
				t.Errorf("row %d, =%s: Slopewise %q, LibreOffice %q", i+2, strings.ReplaceAll(fm, "{r}", strconv.Itoa(i+2)), got, want)
			}
			checked++
		}
	}
	t.Logf("%d results compared with LibreOffice, %d refused", checked, refused)
}

// cellShown is a calculated cell as text: a number, TRUE/FALSE, text,
// or the reason it is missing.
func cellShown(col *table.Column, i int) string {
	if col.Missing[i] != table.Present {
		return col.Missing[i].String()
	}
	if col.Texts != nil && col.Texts[i] != "" {
		return col.Texts[i]
	}
	return strconv.FormatFloat(col.Numbers[i], 'g', -1, 64)
}

// sameResult compares a result with LibreOffice's CSV text: numbers to
// 1e-13 relative, LibreOffice's "Err:502" (invalid argument) and
// "#NUM!" as the same error, other errors by name.
func sameResult(got, want string) bool {
	if want == "#DIV/0!" || want == "#VALUE!" || want == "Err:502" || want == "#NUM!" || want == "#N/A" {
		return got == table.ErrorValue.String()
	}
	g, err1 := strconv.ParseFloat(got, 64)
	w, err2 := strconv.ParseFloat(want, 64)
	if err1 == nil && err2 == nil {
		return g == w || math.Abs(g-w) <= 1e-13*math.Max(math.Abs(g), math.Abs(w))
	}
	return strings.EqualFold(got, want)
}

// formulaBook is a sheet of inputs in A and B and a column C of formulas
// in the forms writers use, cell XML given by each test.
func formulaBook(cCells []string) *iotest.RawBook {
	b := &iotest.RawBook{Shared: []string{"a", "b", "c", "t"}}
	rows := []string{iotest.Row(1, iotest.Sst("A1", 0), iotest.Sst("B1", 1), iotest.Sst("C1", 2), iotest.Sst("D1", 3))}
	for i, c := range cCells {
		r := i + 2
		rows = append(rows, iotest.Row(r, iotest.Num(fmt.Sprintf("A%d", r), fmt.Sprint(r*10)), iotest.Num(fmt.Sprintf("B%d", r), fmt.Sprint(r)), c, iotest.Num(fmt.Sprintf("D%d", r), "1")))
	}
	b.Sheets = []iotest.RawSheet{{Name: "Data", Rows: rows}}
	return b
}

// readBothWays reads a workbook with the fast reader and with sheetStream,
// formulas calculated, and fails on any difference between the two.
func readBothWays(t *testing.T, path string) *table.Table {
	t.Helper()
	fast, err1 := readCalc(context.Background(), path, table.Options{}, true)
	slow, err2 := readCalc(context.Background(), path, table.Options{}, false)
	if err1 != nil || err2 != nil {
		t.Fatalf("fast: %v; standard: %v", err1, err2)
	}
	if d := iotest.SameTables(fast, slow); d != "" {
		t.Fatalf("the two readers differ: %s", d)
	}
	return fast
}

// TestFormulaForms reads the forms of formula cells that writers produce
// (observed in testdata/interop: openpyxl's <v></v>, xlsxwriter's <v>0</v>
// with fullCalcOnLoad, exceljs's and SheetJS's <f> alone; shared and
// array formulas as ECMA-376 Part 1, section 18.3.1.40 describes them),
// in both sheet readers.
func TestFormulaForms(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		name     string
		cells    []string
		stale    bool
		want     []float64 // NaN: missing
		formulas table.FormulaCount
	}{
		{"empty v", []string{`<c r="C2"><f>A2*2</f><v></v></c>`, `<c r="C3"><f>A3+B3</f><v/></c>`, `<c r="C4"><f>ROUND(A4/3,2)</f></c>`},
			false, []float64{40, 33, 13.33}, table.FormulaCount{Computed: 3}},
		{"shared", []string{`<c r="C2"><f t="shared" ref="C2:C4" si="0">A2-B2</f><v></v></c>`, `<c r="C3"><f t="shared" si="0"/><v></v></c>`, `<c r="C4"><f t="shared" si="0"/></c>`},
			false, []float64{18, 27, 36}, table.FormulaCount{Computed: 3}},
		{"array", []string{`<c r="C2"><f t="array" ref="C2">SUM(A2:B2)</f></c>`, `<c r="C3"><f t="array" ref="C3">MAX(A3:B3)</f><v>30</v></c>`, `<c r="C4"><v>7</v></c>`},
			false, []float64{22, 30, 7}, table.FormulaCount{Computed: 1, Saved: 1}},
		{"saved", []string{`<c r="C2"><f>A2*2</f><v>40</v></c>`, `<c r="C3"><f>A3*2</f><v>999</v></c>`, `<c r="C4"><v></v></c>`},
			false, []float64{40, 999, math.NaN()}, table.FormulaCount{Saved: 2}},
		{"stale zeros", []string{`<c r="C2"><f>A2*2</f><v>0</v></c>`, `<c r="C3"><v>5</v></c>`, `<c r="C4"><f>A4*2</f><v>0</v></c>`},
			true, []float64{40, 5, 80}, table.FormulaCount{Computed: 2, Stale: 2}},
		{"stale, not calculable", []string{`<c r="C2"><f>INDIRECT("A2")</f><v>0</v></c>`, `<c r="C3"><f>A3*2</f><v>0</v></c>`, `<c r="C4"><v>5</v></c>`},
			true, []float64{math.NaN(), 60, 5}, table.FormulaCount{Computed: 1, Missing: 1, Stale: 2}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b := formulaBook(c.cells)
			if c.stale {
				b.WbAfter = `<calcPr calcId="124519" fullCalcOnLoad="1"/>`
			}
			tab := readBothWays(t, b.Write(t, dir, strings.ReplaceAll(c.name, " ", "_")+".xlsx"))
			col := tab.Column("c")
			for i, w := range c.want {
				got := col.Numbers[i]
				if math.IsNaN(w) != math.IsNaN(got) || !math.IsNaN(w) && got != w {
					t.Errorf("row %d: %v, want %v", i+2, got, w)
				}
			}
			got := col.Formulas
			got.Why = ""
			if got != c.formulas {
				t.Errorf("formula counts %+v, want %+v", got, c.formulas)
			}
			if c.formulas.Missing > 0 {
				if col.MissingCount[table.NoCachedValue] != c.formulas.Missing || tab.FormulaError(col) == nil {
					t.Errorf("missing %v, error %v", col.MissingCount, tab.FormulaError(col))
				}
				if msg := tab.FormulaError(col).Error(); !strings.Contains(msg, `column "c"`) || !strings.Contains(msg, "cell C2") || !strings.Contains(msg, "INDIRECT") || !strings.Contains(msg, "open the workbook in a spreadsheet program and save it") {
					t.Errorf("message %q", msg)
				}
			} else if tab.FormulaError(col) != nil {
				t.Errorf("unexpected error %v", tab.FormulaError(col))
			}
		})
	}
}

// TestTextFormulaResults: a formula giving text (t="str") keeps its text;
// an empty text result is a blank cell, not damage; an empty <v> in a
// cell without a formula is a blank cell.
func TestTextFormulaResults(t *testing.T) {
	b := formulaBook([]string{`<c r="C2" t="str"><f>IF(A2&gt;0,"yes","no")</f><v>yes</v></c>`, `<c r="C3" t="str"><f>IF(A3&gt;99,"yes","")</f><v></v></c>`, `<c r="C4" t="str"><v></v></c>`, `<c r="C5" t="n"><v/></c>`, `<c r="C6" t="e"><v></v></c>`, `<c r="C7" t="b"><v></v></c>`, `<c r="C8" t="str"><f>"no"</f><v>no</v></c>`})
	tab := readBothWays(t, b.Write(t, t.TempDir(), "text.xlsx"))
	col := tab.Column("c")
	if col.Kind != table.YesNo || col.Texts[0] != "yes" || col.Texts[6] != "no" {
		t.Fatalf("kind %v, texts %q", col.Kind, col.Texts)
	}
	for i := 1; i <= 5; i++ {
		if col.Missing[i] != table.Blank {
			t.Errorf("row %d: %v, want blank", i+2, col.Missing[i])
		}
	}
	if col.Formulas.Saved != 3 {
		t.Errorf("formulas %+v", col.Formulas)
	}
}
