package rvfit

import (
	"bufio"
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"sync/atomic"
	"testing"
	"time"
)

// wideTable writes a table of rows × cols: BJD, RV, e_RV, FWHM, e_FWHM,
// BIS, SVal, Halpha, then columns of pipeline numbers and one text column,
// as archive tables come.
func wideTable(rows, cols int, seed uint64) []byte {
	r := rand.New(rand.NewPCG(seed, 1))
	var b bytes.Buffer
	names := []string{"BJD", "RV", "e_RV", "FWHM", "e_FWHM", "BIS", "SVal", "Halpha"}
	for j := len(names); j < cols-1; j++ {
		names = append(names, "x"+strconv.Itoa(j))
	}
	names = append(names, "prog")
	for j, n := range names {
		if j > 0 {
			b.WriteByte(',')
		}
		b.WriteString(n)
	}
	b.WriteByte('\n')
	for i := 0; i < rows; i++ {
		fmt.Fprintf(&b, "%.6f,%.3f,%.3f,%.2f,%.2f,%.2f,%.4f,%.5f", 2455000+float64(i)*0.37+r.Float64()*0.01, r.NormFloat64()*5, 1+r.Float64(),
			7100+r.NormFloat64()*10, 5+r.Float64(), r.NormFloat64()*3, 0.17+r.Float64()*0.02, 0.03+r.Float64()*0.002)
		for j := 8; j < cols-1; j++ {
			b.WriteByte(',')
			b.WriteString(strconv.FormatFloat(r.NormFloat64(), 'f', 4, 64))
		}
		b.WriteString(",P-42\n")
	}
	return b.Bytes()
}

// BenchmarkReadWideTable reads a 10,000-row, 60-column table: with the
// recognised columns only, and with every numeric column named an
// indicator.
func BenchmarkReadWideTable(b *testing.B) {
	data := wideTable(10000, 60, 1)
	all := []string{}
	for j := 8; j < 59; j++ {
		all = append(all, "x"+strconv.Itoa(j))
	}
	for _, c := range []struct {
		name string
		opts *ReadOptions
	}{{"recognised", nil}, {"all-indicators", &ReadOptions{Indicators: all}}} {
		b.Run(c.name, func(b *testing.B) {
			b.SetBytes(int64(len(data)))
			for b.Loop() {
				if _, _, err := ReadTableFrom(bytes.NewReader(data), "wide.csv", c.opts); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(10000*b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}

// BenchmarkReadLargeTable streams a 200 MB table generated at bench time
// (not kept): rows per second and the peak heap in use while reading.
func BenchmarkReadLargeTable(b *testing.B) {
	path := filepath.Join(b.TempDir(), "large.csv")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := bufio.NewWriter(f)
	r := rand.New(rand.NewPCG(2, 3))
	w.WriteString("# a large table\nBJD,RV,e_RV,FWHM,BIS,SVal,target,note\n")
	rows := 0
	for size := 0; size < 200<<20; rows++ {
		n, _ := fmt.Fprintf(w, "%.6f,%.3f,%.3f,%.2f,%.2f,%.4f,HD 1234,observed in good conditions\n",
			2440000+float64(rows)*0.01, r.NormFloat64()*5, 1+r.Float64(), 7100+r.NormFloat64()*10, r.NormFloat64()*3, 0.17+r.Float64()*0.02)
		size += n
	}
	w.Flush()
	f.Close()
	var peak atomic.Uint64
	stop := make(chan struct{})
	go func() {
		var ms runtime.MemStats
		for {
			select {
			case <-stop:
				return
			case <-time.After(20 * time.Millisecond):
				runtime.ReadMemStats(&ms)
				if ms.HeapInuse > peak.Load() {
					peak.Store(ms.HeapInuse)
				}
			}
		}
	}()
	runtime.GC()
	b.ResetTimer()
	for b.Loop() {
		s, _, err := ReadTable(path, nil)
		if err != nil {
			b.Fatal(err)
		}
		if s.Len() != rows {
			b.Fatalf("%d epochs, want %d", s.Len(), rows)
		}
	}
	close(stop)
	b.ReportMetric(float64(rows*b.N)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(peak.Load())/(1<<20), "peak-heap-MB")
	b.ReportMetric(float64(rows), "rows")
}
