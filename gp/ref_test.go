package gp

import (
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// refCase is one case of testdata/gp/ref.json, written by
// testdata/gp/make_ref.py with scipy.linalg.cho_factor (scipy 1.10.1,
// numpy 1.24.2, Debian python 3.11; versions are also in the file).
type refCase struct {
	Name     string      `json:"name"`
	Kernel   string      `json:"kernel"`
	Params   []float64   `json:"params"`
	T        []float64   `json:"t"`
	R        []float64   `json:"r"`
	Variance []float64   `json:"variance"`
	Chi2     float64     `json:"chi2"`
	LogDet   float64     `json:"logdet"`
	LnL      float64     `json:"lnl"`
	Alpha    []float64   `json:"alpha"`
	TNew     []float64   `json:"tnew"`
	Mean     []float64   `json:"mean"`
	PredVar  []float64   `json:"predvar"`
	Series   []refSeries `json:"series"`
}

type refSeries struct {
	Output   string    `json:"output"`
	T        []float64 `json:"t"`
	Variance []float64 `json:"variance"`
	R        []float64 `json:"r"`
}

type refFile struct {
	Generator string    `json:"generator"`
	Scipy     string    `json:"scipy"`
	Numpy     string    `json:"numpy"`
	Cases     []refCase `json:"cases"`
}

func loadRef(t testing.TB) map[string]refCase {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "gp", "ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f refFile
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatal(err)
	}
	m := make(map[string]refCase)
	for _, c := range f.Cases {
		m[c.Name] = c
	}
	return m
}
