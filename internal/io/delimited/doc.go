// Package delimited reads delimited text tables (.csv, .tsv, .txt).
//
// It sniffs a file's encoding (UTF-8 with or without a byte order mark,
// UTF-16 with one, else Windows-1252), its delimiter (',' ';' tab '|')
// and its decimal separator; quoted fields may span lines (text.go).
// Read gives a whole table.Table through encoding/csv. For a fit that
// streams its rows, OpenStream surveys the file once and Stream.Pass
// reads it again a chunk of rows at a time (stream.go), through a
// scanner of its own (csvscan.go) fed by a goroutine that splits records
// a batch ahead (ahead.go); the first pass keeps its chunks in a compact
// temporary file that the later passes read back instead of parsing
// again (replay.go, replayfile_*.go).
//
// It never writes or changes the text file, and knows nothing of
// workbooks.
package delimited
