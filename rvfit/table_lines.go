package rvfit

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"unicode/utf16"
	"unicode/utf8"
)

// maxLineBytes bounds one line of a text table. Real per-epoch tables have
// lines of a few hundred bytes; a longer line is binary data or a file that
// is not a table, and is reported as such rather than buffered.
const maxLineBytes = 1 << 20

// maxColumns bounds the number of columns of a table.
const maxColumns = 10000

// lineReader reads the lines of a text table one at a time, whatever their
// ending (LF, CRLF or a lone CR), refusing NUL bytes and other control
// characters (binary data; tabs and form feeds pass), over-long lines and
// text that is not UTF-8. It decodes UTF-16 text that starts with a
// byte-order mark.
type lineReader struct {
	sc    *bufio.Scanner
	line  int    // number of the line last returned, 1-based
	note  string // what the reader did to the text (decoded UTF-16), "" if nothing
	count *countingReader
}

// countingReader counts the bytes read through it and reports progress.
type countingReader struct {
	r        io.Reader
	n        int64
	next     int64
	total    int64
	progress func(done, total int64)
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	if c.progress != nil && c.n >= c.next {
		c.progress(c.n, c.total)
		c.next = c.n + 4<<20
	}
	return n, err
}

// newLineReader wraps r. total is the size of the input in bytes when
// known (for progress), else 0.
func newLineReader(r io.Reader, total int64, progress func(done, total int64)) *lineReader {
	cr := &countingReader{r: r, total: total, progress: progress}
	br := bufio.NewReaderSize(cr, 64<<10)
	lr := &lineReader{count: cr}
	var src io.Reader = br
	if head, _ := br.Peek(2); len(head) == 2 {
		switch {
		case head[0] == 0xFF && head[1] == 0xFE:
			br.Discard(2)
			src, lr.note = &utf16Reader{r: br, little: true}, "the file is UTF-16 text (little-endian, with a byte-order mark); decoded"
		case head[0] == 0xFE && head[1] == 0xFF:
			br.Discard(2)
			src, lr.note = &utf16Reader{r: br}, "the file is UTF-16 text (big-endian, with a byte-order mark); decoded"
		}
	}
	lr.sc = bufio.NewScanner(src)
	lr.sc.Buffer(make([]byte, 0, 64<<10), maxLineBytes)
	lr.sc.Split(splitAnyEOL)
	return lr
}

// splitAnyEOL is a bufio.SplitFunc that ends a line at LF, CRLF or a lone
// CR (old Mac files).
func splitAnyEOL(data []byte, atEOF bool) (int, []byte, error) {
	if i := bytes.IndexAny(data, "\r\n"); i >= 0 {
		if data[i] == '\n' {
			return i + 1, data[:i], nil
		}
		if i+1 < len(data) {
			if data[i+1] == '\n' {
				return i + 2, data[:i], nil
			}
			return i + 1, data[:i], nil
		}
		if !atEOF {
			return 0, nil, nil // a CR at the end of the buffer: LF may follow
		}
		return i + 1, data[:i], nil
	}
	if atEOF && len(data) > 0 {
		return len(data), data, nil
	}
	return 0, nil, nil
}

// next returns the next line (without its ending). At the end of the input
// it returns io.EOF. Errors wrap ErrBadFormat and name the line.
func (lr *lineReader) next(file string) (string, error) {
	if !lr.sc.Scan() {
		err := lr.sc.Err()
		if err == nil {
			return "", io.EOF
		}
		if errors.Is(err, bufio.ErrTooLong) {
			return "", &TableError{File: file, Line: lr.line + 1, Err: fmt.Errorf("%w: line is longer than %d bytes (a text table has short lines; is this a binary file?)", ErrBadFormat, maxLineBytes)}
		}
		return "", &TableError{File: file, Line: lr.line + 1, Err: fmt.Errorf("%w: %v", ErrBadFormat, err)}
	}
	lr.line++
	b := lr.sc.Bytes()
	if lr.line == 1 {
		b = bytes.TrimPrefix(b, []byte("\ufeff"))
	}
	if i := bytes.IndexByte(b, 0); i >= 0 {
		return "", &TableError{File: file, Line: lr.line, Err: fmt.Errorf("%w: line holds a NUL byte at byte %d (binary data, or UTF-16 text without a byte-order mark: save the table as UTF-8 text)", ErrBadFormat, i+1)}
	}
	if !utf8.Valid(b) {
		return "", &TableError{File: file, Line: lr.line, Err: fmt.Errorf("%w: line is not UTF-8 text", ErrBadFormat)}
	}
	// Other control characters mark binary data too; name the byte, never
	// echo it.
	if i := bytes.IndexFunc(b, func(r rune) bool { return r < 0x20 && r != '\t' && r != '\f' && r != '\v' || r == 0x7f }); i >= 0 {
		return "", &TableError{File: file, Line: lr.line, Err: fmt.Errorf("%w: binary data at byte %d of the line (control character 0x%02x): a table is text", ErrBadFormat, i+1, b[i])}
	}
	return string(b), nil
}

// utf16Reader decodes UTF-16 into UTF-8.
type utf16Reader struct {
	r      *bufio.Reader
	little bool
	carry  []uint16 // a high surrogate waiting for its pair
	out    []byte
	err    error
}

func (u *utf16Reader) Read(p []byte) (int, error) {
	for len(u.out) == 0 {
		if u.err != nil {
			return 0, u.err
		}
		var buf [4096]byte
		n, err := io.ReadFull(u.r, buf[:])
		units := append([]uint16(nil), u.carry...)
		u.carry = nil
		for i := 0; i+1 < n; i += 2 {
			a, b := uint16(buf[i]), uint16(buf[i+1])
			if u.little {
				units = append(units, a|b<<8)
			} else {
				units = append(units, a<<8|b)
			}
		}
		if k := len(units); k > 0 && err == nil && units[k-1] >= 0xD800 && units[k-1] < 0xDC00 {
			u.carry, units = units[k-1:], units[:k-1]
		}
		for _, r := range utf16.Decode(units) {
			u.out = utf8.AppendRune(u.out, r)
		}
		if err == io.ErrUnexpectedEOF {
			err = io.EOF
		}
		u.err = err
	}
	n := copy(p, u.out)
	u.out = u.out[n:]
	return n, nil
}
