//go:build !unix

package workbook

import "io/fs"

// chownLike does nothing where files have no Unix owner.
func chownLike(string, fs.FileInfo) {}
