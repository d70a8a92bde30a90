package workbook

import (
	"context"
	"testing"
	"time"

	"slopewise/internal/io/iotest"
)

// BenchmarkRead1M reads the 1,000,000 × 12 sheet as CSV and as a
// workbook; rows/s is the figure to watch.
func BenchmarkRead1M(b *testing.B) {
	for _, ext := range []string{"csv", "xlsx"} {
		b.Run(ext, func(b *testing.B) {
			path := iotest.BenchFile(b, ext)
			b.ReportAllocs()
			b.ResetTimer()
			start := time.Now()
			for i := 0; i < b.N; i++ {
				tab, err := Read(context.Background(), path, Options{})
				if err != nil {
					b.Fatal(err)
				}
				if tab.Len() != iotest.BenchRows || len(tab.Columns) != iotest.BenchCols {
					b.Fatalf("read %d rows, %d columns", tab.Len(), len(tab.Columns))
				}
			}
			b.ReportMetric(float64(iotest.BenchRows*b.N)/time.Since(start).Seconds(), "rows/s")
		})
	}
}
