package activity

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"spotsift/rvfit"
)

// Report is what the report of one star is made from: the diagnosis and
// the series it was computed from.
type Report struct {
	Diagnosis *Diagnosis
	Series    *rvfit.Series
	// Star is the star file's content, nil when none was given.
	Star *Star
}

// Report file names inside a star's output folder.
const (
	VerdictFile = "verdict.json"
	HTMLFile    = "report.html"
	PDFFile     = "report.pdf"
	FiguresDir  = "figures"
)

// WriteReport writes a star's outputs into dir (created if needed): the
// verdict JSON, the HTML report, the PDF report and the figures as SVG and
// PNG files. Each file is written to a temporary name and renamed, so a
// reader never sees half a file.
func WriteReport(dir string, r *Report) error {
	if r == nil || r.Diagnosis == nil {
		return fmt.Errorf("activity: no diagnosis to report")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	return rvfit.WriteFileAtomic(filepath.Join(dir, VerdictFile), func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(r.Diagnosis)
	})
}
