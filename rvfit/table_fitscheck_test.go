package rvfit

import (
	"bytes"
	"errors"
	"fmt"
	"strings"
	"testing"
)

// setCard replaces the value of keyword key in the first header that has
// it (the card keeps its 80 characters).
func setCard(t *testing.T, b []byte, key, value string) []byte {
	t.Helper()
	out := append([]byte(nil), b...)
	for c := 0; c+80 <= len(out); c += 80 {
		if strings.TrimSpace(string(out[c:c+8])) == key {
			copy(out[c:c+80], fmt.Sprintf("%-80s", fmt.Sprintf("%-8s= %s", key, value)))
			return out
		}
	}
	t.Fatalf("no %s card", key)
	return nil
}

// A damaged binary-table header is caught by the layout check, before the
// FITS decoder sees it, with a message naming the keyword; no recovered
// panic text reaches the user.
func TestFITSTableLayoutCheck(t *testing.T) {
	var good bytes.Buffer
	if err := WriteFITSTable(&good, roundTripSeries(), nil); err != nil {
		t.Fatal(err)
	}
	// The layout check reads quoted values without their comments.
	if v := cardValue("'BINTABLE'           / binary table extension"); v != "BINTABLE" {
		t.Fatalf("cardValue = %q", v)
	}
	if v := cardValue("'O''Hara  ' / a name"); v != "O'Hara" {
		t.Fatalf("cardValue = %q", v)
	}
	for _, c := range []struct{ key, value, want string }{
		{"TFIELDS", "999", "TFORM"},
		{"TFIELDS", "-1", "TFIELDS"},
		{"TFORM1", "'-1D     '", "TFORM1"},
		{"TFORM1", "'Z       '", "unknown type code"},
		{"TFORM1", "'2D      '", "NAXIS1"},
		{"TFORM1", "'99999999999D'", "repeat count"},
		{"NAXIS1", "1000", "NAXIS1 = 1000 bytes a row"},
		{"NAXIS1", "5", "add up to 72 bytes a row"}, // shorter than one column's repeat count: still a row-length mismatch
		{"NAXIS2", "100000", "truncated"},
	} {
		b := setCard(t, good.Bytes(), c.key, c.value)
		_, _, err := ReadTableFrom(bytes.NewReader(b), "bad.fits", nil)
		if !errors.Is(err, ErrBadFormat) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s = %s: error %v, want ErrBadFormat naming %q", c.key, c.value, err, c.want)
		}
		for _, panicText := range []string{"runtime error", "nil pointer", "out of range", "goroutine"} {
			if err != nil && strings.Contains(err.Error(), panicText) {
				t.Errorf("%s = %s: panic text in %v", c.key, c.value, err)
			}
		}
	}
}
