package rvfit

import (
	"path/filepath"
	"strings"
	"testing"

	"spotsift/rvfit/rvtest"
)

// realFiles are the public files of ../shared/realdata with the options
// README.md documents for each ("Reading real tables"), and 51 Peg's
// also without its unit, which its uncertainties give. minRows is the
// fewest epochs each must give (the file's row count less documented
// rejections, from looking at the files).
var realFiles = []struct {
	file    string
	opts    ReadOptions
	minRows int
	wantInd []string
}{
	{"keck-hires/HD26965_KECK.vels", ReadOptions{Columns: map[string]string{"s_index": "4", "halpha": "5"}}, 280, []string{"s_index", "halpha"}},
	{"corot7/corot7.txt", ReadOptions{}, 170, nil},
	{"51peg-harps/51pegrv.txt", ReadOptions{RVUnit: "km/s"}, 90, nil},
	{"51peg-harps/51pegrv.txt", ReadOptions{}, 90, nil}, // km/s by its uncertainties
	{"eps-eri/22049_Benedict06_Tull.rdb", ReadOptions{}, 30, nil},
	{"eps-eri/22049_CLS21_APF.csv", ReadOptions{Duplicates: "mean"}, 500, nil},
	{"eps-eri/22049_CLS21_Hamilton.csv", ReadOptions{}, 300, nil},
	{"eps-eri/22049_EBPS_HIRES.vels", ReadOptions{Columns: map[string]string{"s_index": "4", "halpha": "5"}}, 160, []string{"s_index", "halpha"}},
	{"eps-eri/22049_RVBank_HARPS.csv", ReadOptions{RejectIf: []string{"f_RV!=0"}, Units: map[string]string{"BIS": "km/s"}}, 700, []string{"fwhm", "contrast", "bis", "log_rhk", "halpha"}},
	{"eps-eri/22049_Roettenbacher22_EXPRES.txt", ReadOptions{}, 150, nil},
	{"eps-eri/22049_Zechmeister13_CES-LC.txt", ReadOptions{}, 60, nil},
	{"eps-eri/22049_Zechmeister13_CES-VLC.txt", ReadOptions{}, 60, nil},
	{"eps-eri/22049_rv_main_binned.txt", ReadOptions{}, 690, nil},
	{"eps-eri/22049_rv_main_unbinned.txt", ReadOptions{Duplicates: "mean"}, 2100, nil},
}

func TestReadRealFiles(t *testing.T) {
	rd := rvtest.RealDataDir(t)
	for _, tt := range realFiles {
		t.Run(tt.file, func(t *testing.T) {
			opts := tt.opts
			s, warns, err := ReadTable(filepath.Join(rd, tt.file), &opts)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%d epochs; notes %q; warnings %q", s.Len(), s.Notes, warns)
			if s.Len() < tt.minRows {
				t.Errorf("%d epochs, want at least %d", s.Len(), tt.minRows)
			}
			for _, name := range tt.wantInd {
				if s.Indicator(name) == nil || s.Indicator(name).Count() == 0 {
					t.Errorf("no indicator %q (have %v)", name, indicatorNamesOf(s))
				}
			}
			for _, tm := range s.Time {
				if tm < 2440000 || tm > 2470000 {
					t.Fatalf("time %v is not a full Julian date of the last decades", tm)
				}
			}
			// In m/s, whatever unit the file uses: these instruments'
			// uncertainties lie between 0.1 and 30 m/s (common practice).
			if med := median(s.RVErr); !(med > 0.1 && med < 30) {
				t.Errorf("median RV uncertainty %.3g m/s: the velocities' unit was not recognised", med)
			}
		})
	}
}

func indicatorNamesOf(s *Series) string {
	var n []string
	for _, ind := range s.Indicators {
		n = append(n, ind.Name)
	}
	return strings.Join(n, ",")
}

// eps Eri's eight public tables (five layouts) combine into one data set
// with nine zero points: one per instrument, HARPS split at its 2015 fibre
// change. Epoch counts per group are those of the merged table of the same
// release (22049_rv_main_unbinned.txt: Tull 33, Levy (APF) 553, Hamilton
// 357, HIRES-post 163, HARPS-pre 530, HARPS-post 231, EXPRES 164, CES-LC
// 66, CES-VLC 69) less what the data-set file asks: the 15 HARPS rows with
// f_RV != 0 (11 before the split, 4 after, counted with awk) and one APF
// epoch whose two exposures share a time stamp, averaged.
func TestEpsEriDataSet(t *testing.T) {
	rvtest.RealDataDir(t)
	tables, err := ReadDataSetFile("../testdata/realdata/eps-eri.toml")
	if err != nil {
		t.Fatal(err)
	}
	s, warns, err := ReadTables(tables)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("notes %q\nwarnings %q", s.Notes, warns)
	count := map[string]int{}
	for _, in := range s.Instrument {
		count[in]++
	}
	want := map[string]int{"Tull": 33, "APF": 552, "Hamilton": 357, "HIRES": 163, "HARPS": 530 - 11, "HARPS@2457161.5": 231 - 4,
		"EXPRES": 164, "CES-LC": 66, "CES-VLC": 69}
	if len(count) != 9 {
		t.Errorf("%d zero points %v, want 9", len(count), count)
	}
	for k, n := range want {
		if count[k] != n {
			t.Errorf("group %s: %d epochs, want %d (all: %v)", k, count[k], n, count)
		}
	}
}
