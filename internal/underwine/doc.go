// Package underwine lets the tests of the packages that import it (in a
// windows-only test file) clean up their temporary folders under Wine.
//
// Wine 8 (Debian 12) lacks the file-disposition call (information class
// 64) that os.RemoveAll makes on Windows since Go 1.23, so every
// t.TempDir's clean-up fails there. When SLOPEWISE_UNDER_WINE is set
// (packaging/wine-tests.sh, which links with -checklinkname=0), os takes
// Go's own fallback for older Windows. Nothing shipped imports it.
package underwine
