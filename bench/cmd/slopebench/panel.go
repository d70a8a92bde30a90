package main

import (
	"bufio"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
)

// The before-and-after benchmark (issue 14): a panel of units, each
// measured in every year of a span, half of them in a programme from the
// middle year on, with an effect by region (the truth) and each unit's
// own level, which unit effects take out.

// panelEffect is the programme's true effect in each region.
var panelEffect = map[string]float64{"coast": 1, "hills": 2, "plain": 3}

// panel writes the panel CSV: unit, year, post (0/1), coached (0/1, the
// unit's), region (the unit's: coast 50%, hills 30%, plain 20%), age (the
// row's), earnings; one earnings in 1,000 missing.
func panel(args []string) error {
	fs := flag.NewFlagSet("panel", flag.ExitOnError)
	units := fs.Int("units", 100000, "units")
	years := fs.Int("years", 10, "years a unit, half before the start")
	out := fs.String("out", "", "CSV file to write")
	seed := fs.Uint64("seed", 1, "seed")
	fs.Parse(args)
	if *out == "" || *years < 2 {
		return fmt.Errorf("panel needs -out FILE.csv and -years of 2 or more")
	}
	f, err := os.Create(*out)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	rng := rand.New(rand.NewPCG(*seed, 14))
	fmt.Fprintln(w, "unit,year,post,coached,region,age,earnings")
	start := 2015 + *years/2
	row := 0
	for u := 0; u < *units; u++ {
		coached := rng.IntN(2)
		region := "coast"
		switch r := rng.Float64(); {
		case r >= 0.8:
			region = "plain"
		case r >= 0.5:
			region = "hills"
		}
		level := 3 * rng.NormFloat64()
		age := 20 + rng.IntN(40)
		for y := 2015; y < 2015+*years; y++ {
			post := 0
			if y >= start {
				post = 1
			}
			earn := fmt.Sprintf("%.2f", 20+level+0.8*float64(coached)+1.5*float64(post)+0.05*float64(age+y-2015)+
				panelEffect[region]*float64(coached*post)+rng.NormFloat64())
			if row%1000 == 999 {
				earn = ""
			}
			fmt.Fprintf(w, "U%06d,%d,%d,%d,%s,%d,%s\n", u, y, post, coached, region, age+y-2015, earn)
			row++
		}
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
