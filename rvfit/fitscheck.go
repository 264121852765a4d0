package rvfit

import (
	"fmt"
	"strconv"
	"strings"
)

// maxFITSBytes bounds the size of a FITS table file spotsift will read.
const maxFITSBytes = 1 << 30

// checkFITSLayout walks the headers of a FITS file held in b and checks
// that every HDU's data, as its header declares it, lies inside the file,
// and that binary-table columns add up to the declared row length. It runs
// before the FITS decoder, which trusts the header and would otherwise try
// to allocate or read whatever a damaged header says.
func checkFITSLayout(b []byte) error {
	const card, block = 80, fitsBlock
	off := 0
	for hdu := 1; off < len(b); hdu++ {
		kw := map[string]string{}
		end := false
		for !end {
			if off+block > len(b) {
				return fmt.Errorf("HDU %d: header is truncated (no END card)", hdu)
			}
			for c := off; c < off+block; c += card {
				key := strings.TrimSpace(string(b[c : c+8]))
				if key == "END" {
					end = true
					break
				}
				if string(b[c+8:c+10]) == "= " {
					kw[key] = cardValue(string(b[c+10 : c+card]))
				}
			}
			off += block
		}
		integer := func(key string, def, lo, hi int64) (int64, error) {
			s, ok := kw[key]
			if !ok {
				if def >= 0 {
					return def, nil
				}
				return 0, fmt.Errorf("HDU %d: keyword %s is missing", hdu, key)
			}
			n, err := strconv.ParseInt(s, 10, 64)
			if err != nil || n < lo || n > hi {
				return 0, fmt.Errorf("HDU %d: keyword %s = %q is not an integer in [%d, %d]", hdu, key, s, lo, hi)
			}
			return n, nil
		}
		bitpix, err := integer("BITPIX", -1, -64, 64)
		if err != nil {
			return err
		}
		switch bitpix {
		case 8, 16, 32, 64, -32, -64:
		default:
			return fmt.Errorf("HDU %d: BITPIX = %d is not a FITS value", hdu, bitpix)
		}
		naxis, err := integer("NAXIS", -1, 0, 999)
		if err != nil {
			return err
		}
		size := int64(0)
		if naxis > 0 {
			size = 1
			for i := int64(1); i <= naxis; i++ {
				n, err := integer(fmt.Sprintf("NAXIS%d", i), -1, 0, maxFITSBytes)
				if err != nil {
					return err
				}
				size *= n
				if size > maxFITSBytes {
					return fmt.Errorf("HDU %d: data of more than %d bytes", hdu, maxFITSBytes)
				}
			}
		}
		pcount, err := integer("PCOUNT", 0, 0, maxFITSBytes)
		if err != nil {
			return err
		}
		gcount, err := integer("GCOUNT", 1, 0, 1<<20)
		if err != nil {
			return err
		}
		abs := bitpix
		if abs < 0 {
			abs = -abs
		}
		size = abs / 8 * gcount * (pcount + size)
		if size > maxFITSBytes {
			return fmt.Errorf("HDU %d: data of more than %d bytes", hdu, maxFITSBytes)
		}
		if kw["XTENSION"] == "BINTABLE" {
			if err := checkBinTableColumns(hdu, kw, integer); err != nil {
				return err
			}
		}
		padded := (size + block - 1) / block * block
		if int64(off)+size > int64(len(b)) {
			return fmt.Errorf("HDU %d: data is truncated: header declares %d bytes, the file holds %d", hdu, size, int64(len(b))-int64(off))
		}
		off += int(min(padded, int64(len(b)-off)))
	}
	return nil
}

// cardValue returns the value of a header card (the text after "= "): a
// quoted string without its quotes (a doubled quote read as one) and without the
// comment after it, or any other value without its comment.
func cardValue(v string) string {
	t := strings.TrimLeft(v, " ")
	if strings.HasPrefix(t, "'") {
		var sb strings.Builder
		for i := 1; i < len(t); i++ {
			if t[i] == '\'' {
				if i+1 < len(t) && t[i+1] == '\'' {
					sb.WriteByte('\'')
					i++
					continue
				}
				break
			}
			sb.WriteByte(t[i])
		}
		return strings.TrimRight(sb.String(), " ")
	}
	if i := strings.Index(t, "/"); i >= 0 {
		t = t[:i]
	}
	return strings.TrimSpace(t)
}

// checkBinTableColumns checks that the TFORMn of a binary table are known
// codes whose widths add up to NAXIS1.
func checkBinTableColumns(hdu int, kw map[string]string, integer func(string, int64, int64, int64) (int64, error)) error {
	nf, err := integer("TFIELDS", -1, 0, 999)
	if err != nil {
		return err
	}
	rowLen, err := integer("NAXIS1", -1, 0, maxFITSBytes)
	if err != nil {
		return err
	}
	width := map[byte]int64{'L': 1, 'B': 1, 'A': 1, 'I': 2, 'J': 4, 'K': 8, 'E': 4, 'D': 8, 'C': 8, 'M': 16, 'P': 8, 'Q': 16}
	total := int64(0)
	for i := int64(1); i <= nf; i++ {
		key := fmt.Sprintf("TFORM%d", i)
		f, ok := kw[key]
		if !ok {
			return fmt.Errorf("HDU %d: keyword %s is missing (TFIELDS = %d)", hdu, key, nf)
		}
		f = strings.TrimSpace(f)
		j := 0
		for j < len(f) && f[j] >= '0' && f[j] <= '9' {
			j++
		}
		rep := int64(1)
		if j > 0 {
			r, err := strconv.ParseInt(f[:j], 10, 64)
			// A count beyond the row is reported below, with NAXIS1;
			// the bound only keeps the sum from overflowing.
			if err != nil || r > maxFITSBytes {
				return fmt.Errorf("HDU %d: %s = %q has a bad repeat count", hdu, key, f)
			}
			rep = r
		}
		if j >= len(f) {
			return fmt.Errorf("HDU %d: %s = %q has no type code", hdu, key, f)
		}
		code := f[j]
		if code == 'X' {
			total += (rep + 7) / 8
			continue
		}
		w, ok := width[code]
		if !ok {
			return fmt.Errorf("HDU %d: %s = %q has an unknown type code", hdu, key, f)
		}
		total += rep * w
	}
	if total != rowLen {
		return fmt.Errorf("HDU %d: NAXIS1 = %d bytes a row, but the columns TFORM1 to TFORM%d add up to %d bytes a row: NAXIS1 or a TFORMn is wrong", hdu, rowLen, nf, total)
	}
	return nil
}
