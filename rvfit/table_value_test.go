package rvfit

import (
	"errors"
	"strings"
	"testing"
)

// A table of another quantity (a light curve's flux, with sector labels)
// is read with the same rules through ReadOptions.Value and Label.
func TestReadTableValueColumn(t *testing.T) {
	const in = "# units: flux=e-/s\ntime,flux,flux_err,sector,bkg\n1.0,100.5,0.2,S1,3\n2.0,99.5,0.2,S1,4\n3.0,101.0,0.3,S2,5\n"
	s, _, err := ReadTableFrom(strings.NewReader(in), "lc.csv", &ReadOptions{Value: "flux", Label: "sector"})
	if err != nil {
		t.Fatal(err)
	}
	// Values as written: no velocity conversion for a non-rv value column.
	if s.RV[0] != 100.5 || s.RVErr[2] != 0.3 || s.Instrument[2] != "S2" {
		t.Fatalf("read %v %v %v", s.RV, s.RVErr, s.Instrument)
	}
	// bkg is not a recognised indicator: ignored, and said so.
	if len(s.Indicators) != 0 || !strings.Contains(strings.Join(s.Notes, " "), "ignored: bkg") {
		t.Fatalf("indicators %+v, notes %q", s.Indicators, s.Notes)
	}
	// The column mapping applies to the value column's canonical name.
	in2 := strings.ReplaceAll(in, "time,flux,flux_err", "bjd,sap,sap_e")
	s2, _, err := ReadTableFrom(strings.NewReader(in2), "lc.csv", &ReadOptions{Value: "flux", Label: "sector",
		Columns: map[string]string{"time": "bjd", "flux": "sap", "flux_err": "sap_e"}})
	if err != nil || s2.RV[1] != 99.5 {
		t.Fatalf("mapped read: %v %v", s2, err)
	}
	// A missing value column is named in the error.
	_, _, err = ReadTableFrom(strings.NewReader("time,mag,mag_err\n1,2,0.1\n2,3,0.1\n"), "lc.csv", &ReadOptions{Value: "flux"})
	var te *TableError
	if !errors.Is(err, ErrMissingColumn) || !errors.As(err, &te) || te.Column != "flux" {
		t.Fatalf("want a missing-column error naming flux, got %v", err)
	}
}
