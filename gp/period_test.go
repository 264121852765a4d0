package gp

import (
	"errors"
	"testing"
)

func TestCheckPeriod(t *testing.T) {
	ts := []float64{0, 0, 0.5, 3, 7} // smallest non-zero separation 0.5 d
	for _, row := range []struct {
		p       float64
		t       []float64
		wantErr error
	}{
		{1, ts, nil},
		{0.99, ts, ErrPeriodTooShort},
		{0, ts, ErrBadParam},
		{-3, ts, ErrBadParam},
		{0.01, []float64{5, 5}, nil}, // one distinct epoch: nothing to compare
		{0.01, nil, nil},
	} {
		if err := CheckPeriod(row.p, row.t); !errors.Is(err, row.wantErr) {
			t.Errorf("CheckPeriod(%g) = %v, want %v", row.p, err, row.wantErr)
		}
	}
}
