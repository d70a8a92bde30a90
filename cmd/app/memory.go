package main

import (
	"fmt"
	"os"
	"runtime/debug"
	"runtime/metrics"
	"sync"
	"time"
)

// The memory guard of a headless command. Reading is bounded part by
// part (internal/io/workbook), but a file may still find a way to make
// the reader hold far more than its size warrants; the Go runtime then
// aborts with exit status 2, the command line's code, after a trace of
// every goroutine. The guard sets a soft limit for the garbage collector
// and, past a hard ceiling, ends the command with a plain message and
// exit status 1 instead. The ceiling grows with the input: 2 GiB plus
// 40 times the file's size (a workbook's cells take some ten to twenty
// times its packed size once read, common practice).
var guardBase int64 = 2 << 30 // a variable for TestMemoryGuard

const (
	guardFactor = 40
	guardEvery  = 50 * time.Millisecond
)

// guardMemory starts the guard for a command reading path; the returned
// function stops it.
func guardMemory(path string) func() {
	ceiling := guardBase
	if info, err := os.Stat(path); err == nil {
		ceiling += guardFactor * info.Size()
	}
	prev := debug.SetMemoryLimit(ceiling)
	done := make(chan struct{})
	go func() {
		sample := []metrics.Sample{{Name: "/memory/classes/total:bytes"}, {Name: "/memory/classes/heap/released:bytes"}}
		tick := time.NewTicker(guardEvery)
		defer tick.Stop()
		for {
			select {
			case <-done:
				return
			case <-tick.C:
			}
			metrics.Read(sample)
			used := int64(sample[0].Value.Uint64()) - int64(sample[1].Value.Uint64())
			if used > ceiling {
				fmt.Fprintf(os.Stderr, "slopewise: %q: reading it took more than %s of memory, far more than a file of its size should; it may be damaged, or made to exhaust memory. Nothing was changed.\n", path, gib(ceiling))
				os.Exit(exitData)
			}
		}
	}()
	var once sync.Once
	return func() {
		once.Do(func() {
			close(done)
			debug.SetMemoryLimit(prev)
		})
	}
}

func gib(n int64) string { return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30)) }
