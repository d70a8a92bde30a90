package estimate

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// nistSet is one NIST StRD linear regression dataset, parsed from NIST's
// distributed file (testdata/nist-strd/, copied unmodified from
// shared/reference/nist-strd/ with its README).
type nistSet struct {
	name      string
	intercept bool
	coef, sd  []float64 // certified estimates and standard deviations
	resSD, r2 float64   // certified residual SD and R-squared
	y         []float64
	x         [][]float64 // predictor columns as in the file
}

var (
	nistParam = regexp.MustCompile(`^\s*B(\d+)\s+(\S+)\s+(\S+)\s*$`)
	nistResSD = regexp.MustCompile(`^\s*Standard Deviation\s+(\S+)\s*$`)
	nistR2    = regexp.MustCompile(`^\s*R-Squared\s+(\S+)\s*$`)
)

func readNIST(t *testing.T, name string) nistSet {
	t.Helper()
	fh, err := os.Open(filepath.Join("..", "..", "testdata", "nist-strd", name+".dat"))
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	s := nistSet{name: name}
	num := func(v string) float64 {
		f, err := strconv.ParseFloat(v, 64)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		return f
	}
	sc := bufio.NewScanner(fh)
	for line := 1; sc.Scan(); line++ {
		text := strings.TrimRight(sc.Text(), "\r ")
		// NIST README: data rows run from line 61 to the end.
		if line >= 61 {
			fields := strings.Fields(text)
			if len(fields) == 0 {
				continue
			}
			s.y = append(s.y, num(fields[0]))
			if s.x == nil {
				s.x = make([][]float64, len(fields)-1)
			}
			for j, f := range fields[1:] {
				s.x[j] = append(s.x[j], num(f))
			}
			continue
		}
		if m := nistParam.FindStringSubmatch(text); m != nil && line < 60 {
			if len(s.coef) == 0 {
				s.intercept = m[1] == "0"
			}
			s.coef = append(s.coef, num(m[2]))
			s.sd = append(s.sd, num(m[3]))
		} else if m := nistResSD.FindStringSubmatch(text); m != nil {
			s.resSD = num(m[1])
		} else if m := nistR2.FindStringSubmatch(text); m != nil {
			s.r2 = num(m[1])
		}
	}
	if len(s.coef) == 0 || len(s.y) == 0 {
		t.Fatalf("%s: nothing parsed", name)
	}
	return s
}

// design builds X: the predictor columns as they are when the file has
// several (Longley), else the powers of x the certified parameters ask for.
func (s nistSet) design() ([]float64, int) {
	p := len(s.coef)
	n := len(s.y)
	x := make([]float64, n*p)
	for i := 0; i < n; i++ {
		for j := 0; j < p; j++ {
			var v float64
			switch {
			case len(s.x) > 1 && s.intercept && j == 0:
				v = 1
			case len(s.x) > 1:
				v = s.x[j-1][i]
			case s.intercept:
				v = math.Pow(s.x[0][i], float64(j))
			default:
				v = math.Pow(s.x[0][i], float64(j+1))
			}
			x[i*p+j] = v
		}
	}
	return x, p
}

// lre is the log relative error of McCullough (1998), "Assessing the
// reliability of statistical software", The American Statistician 52(4):
// −log10(|est − cert| / |cert|), or −log10|est − cert| when cert = 0,
// capped at 15 (the digits NIST certifies).
func lre(est, cert float64) float64 {
	d := math.Abs(est - cert)
	if cert != 0 {
		d /= math.Abs(cert)
	}
	if d == 0 {
		return 15
	}
	return math.Min(15, -math.Log10(d))
}

// TestNIST checks the fit against the certified values of the NIST StRD
// linear regression datasets. Required LREs are those of the engine's
// contract: ≥ 9 on the lower and average sets, Longley and Wampler1–3;
// ≥ 7 on Filip, Wampler4 and Wampler5, Filip not declared rank deficient.
func TestNIST(t *testing.T) {
	need := map[string]float64{
		"Norris": 9, "Pontius": 9, "NoInt1": 9, "NoInt2": 9, "Longley": 9,
		"Wampler1": 9, "Wampler2": 9, "Wampler3": 9,
		"Filip": 7, "Wampler4": 7, "Wampler5": 7,
	}
	names := []string{"Norris", "Pontius", "NoInt1", "NoInt2", "Filip", "Longley",
		"Wampler1", "Wampler2", "Wampler3", "Wampler4", "Wampler5"}
	var table strings.Builder
	fmt.Fprintf(&table, "%-9s %4s %4s %9s %9s %9s %9s\n", "dataset", "n", "k", "min LRE b", "min LRE se", "LRE s", "required")
	for _, name := range names {
		s := readNIST(t, name)
		x, k := s.design()
		n := len(s.y)
		fit, aliased := fitLS(x, s.y, n, k)
		if fit == nil {
			t.Errorf("%s: declared rank deficient (aliased %v)", name, aliased)
			continue
		}
		sigma := math.Sqrt(fit.rss / float64(n-k))
		minB, minSE := 15.0, 15.0
		for j := 0; j < k; j++ {
			minB = math.Min(minB, lre(fit.coef[j], s.coef[j]))
			se := sigma * math.Sqrt(fit.bread[j*k+j])
			minSE = math.Min(minSE, lre(se, s.sd[j]))
		}
		lreS := lre(sigma, s.resSD)
		fmt.Fprintf(&table, "%-9s %4d %4d %9.1f %9.1f %9.1f %9.0f\n", name, n, k, minB, minSE, lreS, need[name])
		for what, got := range map[string]float64{"coefficients": minB, "standard errors": minSE, "residual SD": lreS} {
			if got < need[name] {
				t.Errorf("%s: LRE of %s %.1f, need ≥ %.0f", name, what, got, need[name])
			}
		}
	}
	t.Logf("NIST StRD log relative errors (McCullough 1998):\n%s", table.String())
}
