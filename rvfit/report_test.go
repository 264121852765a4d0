package rvfit

import (
	"bytes"
	"encoding/csv"
	"strings"
	"testing"
)

func TestWriters(t *testing.T) {
	s, _ := twoPlanetSeries(1, 60)
	res, err := Scan(s, &ScanOptions{Grid: &GridOptions{FMax: 0.5}})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := res.WritePeriodograms(&b); err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, l := range strings.Split(b.String(), "\n") {
		if l != "" && !strings.HasPrefix(l, "#") {
			lines = append(lines, l)
		}
	}
	rows, err := csv.NewReader(strings.NewReader(strings.Join(lines, "\n"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != res.Grid.N+1 || rows[0][3] != "rv" || len(rows[0]) != 4+len(res.Prewhitening)+len(res.Indicators) {
		t.Errorf("periodogram CSV: %d rows, header %v", len(rows), rows[0])
	}
	b.Reset()
	if err := res.WritePeaks(&b); err != nil || !strings.Contains(b.String(), "rv ") {
		t.Errorf("peaks: %v\n%s", err, b.String())
	}
	fit, err := FitModel(s, 1, nil, &FitOptions{Starts: 2})
	if err != nil {
		t.Fatal(err)
	}
	b.Reset()
	if err := fit.WriteParams(&b); err != nil || !strings.Contains(b.String(), "P1") {
		t.Errorf("params: %v\n%s", err, b.String())
	}
	b.Reset()
	if err := fit.WriteResiduals(&b); err != nil || strings.Count(b.String(), "\n") != s.Len()+1 {
		t.Errorf("residuals: %v\n%s", err, b.String())
	}
}
