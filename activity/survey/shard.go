package survey

import (
	"fmt"
	"hash/fnv"
	"sort"
	"strconv"
	"strings"
)

// Shard selects a deterministic share of a manifest: shard K of N (1-based)
// takes the stars at positions K−1, K−1+N, K−1+2N, ... of the manifest
// sorted by name. The zero value (N = 0) takes every star.
type Shard struct {
	K, N int
}

// ParseShard reads "K/N" with 1 ≤ K ≤ N; "" gives the zero Shard.
func ParseShard(s string) (Shard, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return Shard{}, nil
	}
	ks, ns, ok := strings.Cut(s, "/")
	k, err1 := strconv.Atoi(strings.TrimSpace(ks))
	n, err2 := strconv.Atoi(strings.TrimSpace(ns))
	if !ok || err1 != nil || err2 != nil || n < 1 || k < 1 || k > n {
		return Shard{}, fmt.Errorf("%w: %q is not K/N with 1 <= K <= N", ErrShard, s)
	}
	return Shard{K: k, N: n}, nil
}

// String returns "K/N", or "" for the zero Shard.
func (s Shard) String() string {
	if s.N == 0 {
		return ""
	}
	return fmt.Sprintf("%d/%d", s.K, s.N)
}

func (s Shard) check() error {
	if s.N == 0 && s.K == 0 {
		return nil
	}
	if s.N < 1 || s.K < 1 || s.K > s.N {
		return fmt.Errorf("%w: %d/%d is not K/N with 1 <= K <= N", ErrShard, s.K, s.N)
	}
	return nil
}

// select returns the indices into stars of the shard's share, in name
// order.
func (s Shard) pick(stars []Entry) []int {
	idx := make([]int, len(stars))
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return stars[idx[a]].Name < stars[idx[b]].Name })
	if s.N <= 1 {
		return idx
	}
	var out []int
	for i, j := range idx {
		if i%s.N == s.K-1 {
			out = append(out, j)
		}
	}
	return out
}

// StarSeed returns the seed of a star's diagnosis: the survey seed mixed
// with the FNV-1a hash of the star's name by the SplitMix64 finaliser
// (Steele, Lea & Flood 2014, OOPSLA '14, 453), so that it depends on
// neither the star's position in the manifest nor the worker or shard that
// runs it.
func StarSeed(seed uint64, name string) uint64 {
	h := fnv.New64a()
	h.Write([]byte(name))
	z := seed ^ h.Sum64()
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}
