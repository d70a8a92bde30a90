// Command thirdparty writes THIRD_PARTY_LICENSES: the licence texts of
// everything linked into the Slopewise program, for every platform it is
// built for, taken from the Go module cache.
//
//	go run ./scripts/thirdparty -o THIRD_PARTY_LICENSES
//
// The linked packages are those `go list -deps` names for ./cmd/app with
// the release build's tags. A module's licence files are the ones at its
// root and in the folders of its linked packages, together with the
// folders below those that hold no Go package (C sources, fonts), which is
// where bundled code keeps its own licence. A module without any licence
// file is an error: its terms must be settled before it is shipped.
package main

import (
	"bufio"
	"bytes"
	"flag"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
)

// Platform is one way the program is built for a package.
type Platform struct {
	GOOS, GOARCH, Tags string
}

// Platforms are the builds that are shipped or written down: Linux, the
// two Windows programs (window and command line) and macOS on both
// processors.
var Platforms = []Platform{
	{"linux", "amd64", "release"},
	{"windows", "amd64", "release"},
	{"windows", "amd64", "release,nowindow"},
	{"darwin", "amd64", "release"},
	{"darwin", "arm64", "release"},
}

// Module is a linked module and the folders of its linked packages.
type Module struct {
	Path, Version, Dir string
	PackageDirs        []string
}

// Licence is one licence file of a module, its name relative to the
// module's root.
type Licence struct {
	Name, Text string
}

func main() {
	out := flag.String("o", "", "write to this file instead of standard output")
	pkg := flag.String("pkg", "./cmd/app", "the program's package")
	flag.Parse()
	text, err := Generate(*pkg)
	if err != nil {
		fmt.Fprintln(os.Stderr, "thirdparty:", err)
		os.Exit(1)
	}
	if *out == "" {
		os.Stdout.Write(text)
		return
	}
	if err := os.WriteFile(*out, text, 0o644); err != nil {
		fmt.Fprintln(os.Stderr, "thirdparty:", err)
		os.Exit(1)
	}
}

// Generate returns the text of THIRD_PARTY_LICENSES for the program pkg.
func Generate(pkg string) ([]byte, error) {
	mods, std, err := Linked(pkg)
	if err != nil {
		return nil, err
	}
	goroot, err := goEnv("GOROOT")
	if err != nil {
		return nil, err
	}
	type section struct {
		title    string
		licences []Licence
	}
	var sections []section
	if std {
		ls, err := licencesIn(goroot, nil)
		if err != nil {
			return nil, err
		}
		sections = append(sections, section{"The Go standard library and runtime (go.dev)", ls})
	}
	for _, m := range mods {
		ls, err := licencesIn(m.Dir, m.PackageDirs)
		if err != nil {
			return nil, err
		}
		if len(ls) == 0 {
			return nil, fmt.Errorf("module %s %s has no licence file in %s", m.Path, m.Version, m.Dir)
		}
		sections = append(sections, section{m.Path + " " + m.Version, ls})
	}

	var b bytes.Buffer
	rule := strings.Repeat("=", 78)
	b.WriteString("Third-party licences of Slopewise\n\n")
	b.WriteString("Slopewise itself is under the MIT licence (LICENSE). The program links in\n")
	b.WriteString("the Go modules below (for Linux, Windows and macOS); each one's licence\n")
	b.WriteString("files follow in full. Written by `go run ./scripts/thirdparty -o\n")
	b.WriteString("THIRD_PARTY_LICENSES` from the Go module cache; do not edit by hand.\n\n")
	for _, s := range sections {
		fmt.Fprintf(&b, "  %-62s %s\n", s.title, kinds(s.licences))
	}
	for _, s := range sections {
		fmt.Fprintf(&b, "\n%s\n%s\n%s\n", rule, s.title, rule)
		for _, l := range s.licences {
			fmt.Fprintf(&b, "\n--- %s\n\n%s\n", l.Name, strings.TrimRight(l.Text, "\n"))
		}
	}
	return b.Bytes(), nil
}

// Linked returns the modules linked into pkg on any of the Platforms,
// sorted by path, without the main module, and whether the standard
// library is linked.
func Linked(pkg string) ([]Module, bool, error) {
	byPath := map[string]*Module{}
	std := false
	for _, p := range Platforms {
		cmd := exec.Command("go", "list", "-deps", "-tags", p.Tags, "-f",
			"{{if .Standard}}std{{else if .Module}}{{if not .Module.Main}}{{.Module.Path}}\t{{.Module.Version}}\t{{.Module.Dir}}\t{{.Dir}}{{end}}{{end}}", pkg)
		cmd.Env = append(os.Environ(), "GOOS="+p.GOOS, "GOARCH="+p.GOARCH, "CGO_ENABLED=1")
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		out, err := cmd.Output()
		if err != nil {
			return nil, false, fmt.Errorf("go list for %s/%s (%s): %v\n%s", p.GOOS, p.GOARCH, p.Tags, err, stderr.String())
		}
		sc := bufio.NewScanner(bytes.NewReader(out))
		for sc.Scan() {
			line := sc.Text()
			if line == "std" {
				std = true
				continue
			}
			f := strings.Split(line, "\t")
			if len(f) != 4 {
				continue
			}
			m := byPath[f[0]]
			if m == nil {
				if f[2] == "" {
					return nil, false, fmt.Errorf("module %s %s is not in the module cache: run go mod download", f[0], f[1])
				}
				m = &Module{Path: f[0], Version: f[1], Dir: f[2]}
				byPath[f[0]] = m
			}
			if !slices.Contains(m.PackageDirs, f[3]) {
				m.PackageDirs = append(m.PackageDirs, f[3])
			}
		}
	}
	var mods []Module
	for _, m := range byPath {
		slices.Sort(m.PackageDirs)
		mods = append(mods, *m)
	}
	slices.SortFunc(mods, func(a, b Module) int { return strings.Compare(a.Path, b.Path) })
	return mods, std, nil
}

// licencesIn returns the licence files at root and in pkgDirs, and in the
// folders below pkgDirs that are not Go packages, sorted by name.
func licencesIn(root string, pkgDirs []string) ([]Licence, error) {
	found := map[string]bool{}
	if err := collect(root, found); err != nil {
		return nil, err
	}
	for _, d := range pkgDirs {
		if err := collect(d, found); err != nil {
			return nil, err
		}
		if err := walkNonGo(d, found); err != nil {
			return nil, err
		}
	}
	var names []string
	for p := range found {
		names = append(names, p)
	}
	slices.Sort(names)
	var ls []Licence
	for _, p := range names {
		b, err := os.ReadFile(p)
		if err != nil {
			return nil, err
		}
		rel, err := filepath.Rel(root, p)
		if err != nil {
			return nil, err
		}
		ls = append(ls, Licence{Name: filepath.ToSlash(rel), Text: strings.ReplaceAll(string(b), "\r\n", "\n")})
	}
	return ls, nil
}

// walkNonGo collects licence files from the folders below dir that hold
// no .go file, descending only through such folders.
func walkNonGo(dir string, found map[string]bool) error {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	for _, e := range entries {
		if !e.IsDir() || e.Name() == "testdata" || isLicenceName(e.Name()) {
			continue
		}
		sub := filepath.Join(dir, e.Name())
		hasGo, err := holdsGo(sub)
		if err != nil {
			return err
		}
		if hasGo {
			continue
		}
		if err := collect(sub, found); err != nil {
			return err
		}
		if err := walkNonGo(sub, found); err != nil {
			return err
		}
	}
	return nil
}

func holdsGo(dir string) (bool, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return false, err
	}
	for _, e := range entries {
		if !e.IsDir() && strings.HasSuffix(e.Name(), ".go") {
			return true, nil
		}
	}
	return false, nil
}

// collect adds dir's licence files, and the files of a licence folder
// (such as "licenses/"), to found.
func collect(dir string, found map[string]bool) error {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	for _, e := range entries {
		if !isLicenceName(e.Name()) {
			continue
		}
		p := filepath.Join(dir, e.Name())
		if !e.IsDir() {
			found[p] = true
			continue
		}
		err := filepath.WalkDir(p, func(q string, d fs.DirEntry, err error) error {
			if err == nil && d.Type().IsRegular() {
				found[q] = true
			}
			return err
		})
		if err != nil {
			return err
		}
	}
	return nil
}

// isLicenceName tells a licence file or folder by its name: LICENSE,
// LICENCE, COPYING, NOTICE, PATENTS, UNLICENSE, with any ending but .go.
func isLicenceName(name string) bool {
	n := strings.ToLower(name)
	if strings.HasSuffix(n, ".go") {
		return false
	}
	for _, p := range []string{"licen", "copying", "notice", "patents", "unlicense"} {
		if strings.HasPrefix(n, p) {
			return true
		}
	}
	return false
}

// kinds names the licences found in ls by their telltale sentences, for
// the summary at the top; the texts themselves are what count.
func kinds(ls []Licence) string {
	var ks []string
	add := func(k string) {
		if !slices.Contains(ks, k) {
			ks = append(ks, k)
		}
	}
	for _, l := range ls {
		t := strings.Join(strings.Fields(strings.ToLower(l.Text)), " ")
		switch {
		case strings.Contains(t, "apache license") && strings.Contains(t, "version 2.0"):
			add("Apache-2.0")
		case strings.Contains(t, "sil open font license"):
			add("OFL-1.1")
		case strings.Contains(t, "permission is hereby granted, free of charge"):
			add("MIT")
		case strings.Contains(t, "redistribution and use in source and binary forms"):
			if strings.Contains(t, "neither the name") || strings.Contains(t, "may be used to endorse") {
				add("BSD-3-Clause")
			} else {
				add("BSD-2-Clause")
			}
		case strings.Contains(t, "permission to use, copy, modify, and/or distribute this software for any purpose"):
			add("ISC")
		case strings.Contains(t, "provided 'as-is'"):
			add("Zlib")
		case strings.Contains(t, "the freetype project license"):
			add("FTL")
		case strings.Contains(t, "gnu general public license"):
			add("GPL-2.0 (alternative)")
		case strings.Contains(t, "mozilla public license"):
			add("MPL-2.0")
		case strings.Contains(t, "creative commons attribution 4.0"):
			add("CC-BY-4.0")
		case strings.Contains(t, "additional ip rights grant (patents)"):
			add("patent grant")
		}
	}
	if len(ks) == 0 {
		return "(see text)"
	}
	return strings.Join(ks, ", ")
}

func goEnv(name string) (string, error) {
	out, err := exec.Command("go", "env", name).Output()
	if err != nil {
		return "", fmt.Errorf("go env %s: %v", name, err)
	}
	return strings.TrimSpace(string(out)), nil
}
