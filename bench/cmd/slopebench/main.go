// Command slopebench is the benchmark harness of issue 7: it generates data
// with a known truth, times whole `slopewise analyze` runs beside the
// reference pipeline in Python (bench/reference.py, statsmodels + pandas
// from Debian), checks that both print the same effects, and prints a
// table of wall time and peak memory. bench/run.sh runs it.
//
//	slopebench gen -rows N -out FILE.csv|FILE.xlsx
//	slopebench run [-rows 10000,100000,1000000] [-stream-rows 10000000] -slopewise BIN [-dir DIR]
//	slopebench panel -units N -years Y -out FILE.csv   (bench/did.sh, issue 14)
package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

func main() {
	if len(os.Args) < 2 {
		usage()
	}
	var err error
	switch os.Args[1] {
	case "gen":
		err = gen(os.Args[2:])
	case "run":
		err = run(os.Args[2:])
	case "panel":
		err = panel(os.Args[2:])
	default:
		usage()
	}
	if err != nil {
		fmt.Fprintln(os.Stderr, "slopebench:", err)
		os.Exit(1)
	}
}

func usage() {
	fmt.Fprintln(os.Stderr, "usage: slopebench gen -rows N -out FILE.csv|FILE.xlsx\n       slopebench run -slopewise BIN [-rows N,N,…] [-stream-rows N,…] [-dir DIR]\n       slopebench panel -units N -years Y -out FILE.csv")
	os.Exit(2)
}

func gen(args []string) error {
	fs := flag.NewFlagSet("gen", flag.ExitOnError)
	rows := fs.Int("rows", 10000, "data rows")
	out := fs.String("out", "", "file to write, .csv or .xlsx")
	seed := fs.Uint64("seed", 1, "seed")
	fs.Parse(args)
	return generate(*out, *rows, *seed)
}

func generate(path string, rows int, seed uint64) error {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return writeCSV(path, rows, seed)
	case ".xlsx":
		return writeXLSX(path, rows, seed)
	}
	return fmt.Errorf("-out must end in .csv or .xlsx, not %q", path)
}

func parseSizes(s string) ([]int, error) {
	var out []int
	for _, f := range strings.Split(s, ",") {
		f = strings.ReplaceAll(strings.TrimSpace(f), "_", "")
		if f == "" {
			continue
		}
		n, err := strconv.Atoi(f)
		if err != nil || n < 100 {
			return nil, fmt.Errorf("row count %q", f)
		}
		out = append(out, n)
	}
	return out, nil
}
