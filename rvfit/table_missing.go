package rvfit

import (
	"fmt"
	"math"
	"sort"
)

// sentinel is a value taken as a "not measured" mark.
type sentinel struct {
	value float64
	why   string
}

// detectSentinels finds likely "not measured" marks among the cells of a
// column that hold numbers: a value repeated at least twice that lies
// outside the range of all the other values and more than ten robust
// standard deviations (1.4826 × the median absolute deviation) from their
// median, with the others varied enough to judge (at least five values,
// three distinct ones, a spread above zero); or, when positive is set (a
// quantity that cannot be negative), any negative value. This is common
// practice in reading archival tables, where −1, −99 or −9999999 mark a
// missing measurement; a genuine value repeated inside the column's spread
// is never taken.
func detectSentinels(v []float64, st []cellState, positive bool) []sentinel {
	w := make([]float64, 0, len(v))
	for k, x := range v {
		if st[k] == cellOK && !math.IsInf(x, 0) {
			w = append(w, x)
		}
	}
	sort.Float64s(w)
	var out []sentinel
	// run returns the length of the run of equal values starting at i
	// (forward) or ending at i (backward).
	run := func(i, dir int) int {
		n := 0
		for j := i; j >= 0 && j < len(w) && w[j] == w[i]; j += dir {
			n++
		}
		return n
	}
	lo, hi := 0, len(w) // the values still in play, w[lo:hi]
	for lo < hi && positive && w[lo] < 0 {
		c := run(lo, 1)
		out = append(out, sentinel{w[lo], "negative, which this quantity cannot be"})
		lo += c
	}
	// A sentinel lies outside the range of the other values, so it is the
	// smallest or the largest: peel them off while they qualify.
	for range 4 {
		found := false
		for _, low := range []bool{true, false} {
			if hi-lo < 7 {
				break
			}
			i, dir := lo, 1
			if !low {
				i, dir = hi-1, -1
			}
			c := run(i, dir)
			if c < 2 {
				continue
			}
			others := w[lo+c : hi]
			if !low {
				others = w[lo : hi-c]
			}
			if len(others) < 5 || others[0] == others[len(others)-1] {
				continue
			}
			med, spread := robustSpread(others)
			if !(spread > 0) {
				continue
			}
			if d := math.Abs(w[i]-med) / spread; d > 10 {
				out = append(out, sentinel{w[i], fmt.Sprintf("repeated %d times, %.3g robust standard deviations from the median of the other values", c, d)})
				if low {
					lo += c
				} else {
					hi -= c
				}
				found = true
				break
			}
		}
		if !found {
			break
		}
	}
	return out
}

// robustSpread returns the median of sorted values and 1.4826 times their
// median absolute deviation; for more than 20,001 values the deviation is
// taken over 20,001 evenly spaced order statistics, which keeps it exact
// to a fraction of a per cent and the work linear.
func robustSpread(sorted []float64) (float64, float64) {
	n := len(sorted)
	med := sorted[n/2]
	if n%2 == 0 {
		med = (sorted[n/2-1] + sorted[n/2]) / 2
	}
	m := min(n, 20001)
	dev := make([]float64, m)
	for i := range dev {
		j := i
		if m < n {
			j = int(float64(i) * float64(n-1) / float64(m-1))
		}
		dev[i] = math.Abs(sorted[j] - med)
	}
	sort.Float64s(dev)
	mad := dev[m/2]
	if m%2 == 0 {
		mad = (dev[m/2-1] + dev[m/2]) / 2
	}
	return med, 1.4826 * mad
}
