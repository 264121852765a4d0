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
	counts := map[float64]int{}
	for k, x := range v {
		if st[k] == cellOK && !math.IsInf(x, 0) {
			counts[x]++
		}
	}
	var cands []float64
	for x, c := range counts {
		if c >= 2 || positive && x < 0 {
			cands = append(cands, x)
		}
	}
	sort.Float64s(cands)
	var out []sentinel
	for _, x := range cands {
		if positive && x < 0 {
			out = append(out, sentinel{x, "negative, which this quantity cannot be"})
			continue
		}
		var others []float64
		for y, c := range counts {
			if y == x {
				continue
			}
			for range c {
				others = append(others, y)
			}
		}
		distinct := len(counts) - 1
		if len(others) < 5 || distinct < 3 {
			continue
		}
		sort.Float64s(others)
		lo, hi := others[0], others[len(others)-1]
		med := median(others)
		dev := make([]float64, len(others))
		for i, y := range others {
			dev[i] = math.Abs(y - med)
		}
		spread := 1.4826 * median(dev)
		if !(spread > 0) || (x >= lo && x <= hi) {
			continue
		}
		if d := math.Abs(x-med) / spread; d > 10 {
			out = append(out, sentinel{x, fmt.Sprintf("repeated %d times, %.3g robust standard deviations from the median of the other values", counts[x], d)})
		}
	}
	return out
}
