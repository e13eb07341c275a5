// Package column holds a column of text compactly, as the readers hand it
// to the analysis: a million observations of one factor, their unit IDs or
// their decimal values cost a few bytes each rather than a string header
// (16 bytes) and a separate allocation each.
//
// A Text is one of four forms, all read the same way (Len, At):
//
//   - a plain []string (Of), for small columns and tests;
//   - packed: every string end to end in one string, with the end offsets
//     (Packer), for values and IDs that are mostly distinct;
//   - coded: the distinct strings once, and a code per row (Coder), for
//     factor levels and blocks;
//   - numbered: a fixed prefix and a number per row (Numbered), for
//     locations such as "line 12" that are formatted only when a message
//     needs one;
//   - decimal: numbers typed plainly in decimal, kept as their digits and
//     the count of them after the point (Decimals), which read back as the
//     same text.
//
// A Text is immutable once built and safe to share; the zero Text is an
// empty column. The package is a leaf: it imports only the standard
// library.
package column

import (
	"fmt"
	"math"
	"strconv"
	"unsafe"
)

// Text is a column of strings. See the package documentation for its forms.
type Text struct {
	plain  []string
	data   string   // packed: the strings end to end
	ends   []uint32 // packed: ends[i] is where string i ends in data
	dict   []string // coded: the distinct strings, in order of first appearance
	codes  []uint32 // coded: each row's index into dict
	prefix string   // numbered
	nums   []uint32 // numbered
	digits []int64  // decimal: the digits, with the sign
	scale  []uint8  // decimal: the digits after the point
	kind   kind
}

type kind uint8

const (
	plain kind = iota
	packed
	coded
	numbered
	decimal
)

// Of wraps s (not copied: s must not change afterwards).
func Of(s []string) Text { return Text{plain: s} }

// Numbered is the column whose row i reads prefix followed by nums[i] in
// decimal (nums is not copied).
func Numbered(prefix string, nums []uint32) Text {
	return Text{prefix: prefix, nums: nums, kind: numbered}
}

// Len is the number of rows.
func (t Text) Len() int {
	switch t.kind {
	case packed:
		return len(t.ends)
	case coded:
		return len(t.codes)
	case numbered:
		return len(t.nums)
	case decimal:
		return len(t.digits)
	}
	return len(t.plain)
}

// At returns row i. It allocates only for a numbered or decimal column.
func (t Text) At(i int) string {
	switch t.kind {
	case decimal:
		return string(formatDecimal(nil, t.digits[i], t.scale[i]))
	case packed:
		start := uint32(0)
		if i > 0 {
			start = t.ends[i-1]
		}
		return t.data[start:t.ends[i]]
	case coded:
		return t.dict[t.codes[i]]
	case numbered:
		return t.prefix + strconv.FormatUint(uint64(t.nums[i]), 10)
	}
	return t.plain[i]
}

// Strings returns the rows as a []string. For a column made by Of it is
// the slice itself, which the caller must not change.
func (t Text) Strings() []string {
	if t.kind == plain {
		return t.plain
	}
	out := make([]string, t.Len())
	for i := range out {
		out[i] = t.At(i)
	}
	return out
}

// Coded returns a coded column's distinct strings (in order of first
// appearance) and each row's index into them; ok is false for the other
// forms. Neither slice may be changed.
func (t Text) Coded() (dict []string, codes []uint32, ok bool) {
	if t.kind != coded {
		return nil, nil, false
	}
	return t.dict, t.codes, true
}

// Pick returns the rows idx, in that order, in the same form.
func (t Text) Pick(idx []int) Text {
	switch t.kind {
	case coded:
		c := make([]uint32, len(idx))
		for j, i := range idx {
			c[j] = t.codes[i]
		}
		return Text{dict: t.dict, codes: c, kind: coded}
	case numbered:
		n := make([]uint32, len(idx))
		for j, i := range idx {
			n[j] = t.nums[i]
		}
		return Numbered(t.prefix, n)
	case decimal:
		d, sc := make([]int64, len(idx)), make([]uint8, len(idx))
		for j, i := range idx {
			d[j], sc[j] = t.digits[i], t.scale[i]
		}
		return Text{digits: d, scale: sc, kind: decimal}
	case packed:
		var p Packer
		for _, i := range idx {
			p.AddString(t.At(i))
		}
		return p.Text()
	}
	s := make([]string, len(idx))
	for j, i := range idx {
		s[j] = t.plain[i]
	}
	return Of(s)
}

// String describes the column for debugging (form and length).
func (t Text) String() string {
	return fmt.Sprintf("column.Text(%d rows, form %d)", t.Len(), t.kind)
}

// MaxBytes is the most text a packed column holds (its offsets are 32-bit).
const MaxBytes = math.MaxUint32

// Packer builds a packed column. The zero Packer is ready to use.
type Packer struct {
	buf  []byte
	ends []uint32
	err  error
}

// Grow makes room for n more rows holding about size bytes in all.
func (p *Packer) Grow(n, size int) {
	if n > 0 {
		p.ends = growTo(p.ends, len(p.ends)+n)
		if need := len(p.buf) + size; need > cap(p.buf) {
			b := make([]byte, len(p.buf), need)
			copy(b, p.buf)
			p.buf = b
		}
	}
}

// Add appends one row.
func (p *Packer) Add(b []byte) {
	if len(p.buf)+len(b) > MaxBytes {
		p.err = fmt.Errorf("more than %d bytes of text in one column", uint64(MaxBytes))
		return
	}
	p.buf = append(p.buf, b...)
	p.ends = append(p.ends, uint32(len(p.buf)))
}

// AddString appends one row.
func (p *Packer) AddString(s string) {
	if len(p.buf)+len(s) > MaxBytes {
		p.err = fmt.Errorf("more than %d bytes of text in one column", uint64(MaxBytes))
		return
	}
	p.buf = append(p.buf, s...)
	p.ends = append(p.ends, uint32(len(p.buf)))
}

// Len is the number of rows added.
func (p *Packer) Len() int { return len(p.ends) }

// Bytes is the number of bytes of text added.
func (p *Packer) Bytes() int { return len(p.buf) }

// Err reports a column too large to pack; the rows past the limit were not
// added.
func (p *Packer) Err() error { return p.err }

// Text returns the column and resets the Packer. The bytes are handed over,
// not copied (the Packer lets go of them).
func (p *Packer) Text() Text {
	var data string
	switch {
	case len(p.buf) == 0:
	case cap(p.buf)-len(p.buf) > len(p.buf)/4:
		data = string(p.buf) // a copy, to let go of the spare capacity
	default:
		data = unsafe.String(unsafe.SliceData(p.buf), len(p.buf))
	}
	t := Text{data: data, ends: trim(p.ends), kind: packed}
	*p = Packer{}
	return t
}

// Coder builds a coded column: each distinct string is stored once. The
// zero Coder is ready to use.
type Coder struct {
	dict  []string
	index map[string]uint32
	codes []uint32
	last  uint32 // code of the previous row: runs of one string need no look-up
}

// Grow makes room for n more rows.
func (c *Coder) Grow(n int) { c.codes = growTo(c.codes, len(c.codes)+n) }

// Add appends one row and returns its code.
func (c *Coder) Add(b []byte) uint32 {
	if len(c.codes) > 0 && c.dict[c.last] == string(b) {
		c.codes = append(c.codes, c.last)
		return c.last
	}
	code, ok := c.find(b)
	if !ok {
		code = c.intern(string(b))
	}
	c.last = code
	c.codes = append(c.codes, code)
	return code
}

// find looks b up: by comparing with each string while there are few
// (faster than hashing for the handful of levels a factor has), else in
// the index.
func (c *Coder) find(b []byte) (uint32, bool) {
	if len(c.dict) <= 8 {
		for k, s := range c.dict {
			if s == string(b) {
				return uint32(k), true
			}
		}
		return 0, false
	}
	code, ok := c.index[string(b)]
	return code, ok
}

// AddString appends one row and returns its code.
func (c *Coder) AddString(s string) uint32 {
	if len(c.codes) > 0 && c.dict[c.last] == s {
		c.codes = append(c.codes, c.last)
		return c.last
	}
	code, ok := c.find(unsafe.Slice(unsafe.StringData(s), len(s)))
	if !ok {
		code = c.intern(s)
	}
	c.last = code
	c.codes = append(c.codes, code)
	return code
}

func (c *Coder) intern(s string) uint32 {
	if c.index == nil {
		c.index = map[string]uint32{}
	}
	code := uint32(len(c.dict))
	c.dict = append(c.dict, s)
	c.index[s] = code
	return code
}

// Len is the number of rows added.
func (c *Coder) Len() int { return len(c.codes) }

// Distinct is the number of distinct strings so far.
func (c *Coder) Distinct() int { return len(c.dict) }

// Text returns the column and resets the Coder.
func (c *Coder) Text() Text {
	t := Text{dict: c.dict, codes: trim(c.codes), kind: coded}
	*c = Coder{}
	return t
}

// Code returns the column of s, coded.
func Code(s []string) Text {
	var c Coder
	c.Grow(len(s))
	for _, v := range s {
		c.AddString(v)
	}
	return c.Text()
}

func growTo[E any](s []E, n int) []E {
	if n > cap(s) {
		out := make([]E, len(s), n)
		copy(out, s)
		return out
	}
	return s
}

// trim returns s without much spare capacity: a copy when more than a
// quarter is spare (as after growing by doubling, with no size to go by).
func trim(s []uint32) []uint32 {
	if cap(s)-len(s) > len(s)/4 {
		return append([]uint32(nil), s...)
	}
	return s
}

// Append returns the column with s added, as the built-in append does for a
// slice (the result may share storage with t). The result is a plain
// column; Append suits building small columns row by row.
func (t Text) Append(s ...string) Text {
	if t.kind != plain {
		t = Of(t.Strings())
	}
	return Of(append(t.plain, s...))
}

// Slice returns rows i to j−1, in the same form, sharing storage with t.
func (t Text) Slice(i, j int) Text {
	switch t.kind {
	case coded:
		return Text{dict: t.dict, codes: t.codes[i:j:j], kind: coded}
	case numbered:
		return Numbered(t.prefix, t.nums[i:j:j])
	case decimal:
		return Text{digits: t.digits[i:j:j], scale: t.scale[i:j:j], kind: decimal}
	case packed:
		idx := make([]int, j-i)
		for k := range idx {
			idx[k] = i + k
		}
		return t.Pick(idx)
	}
	return Of(t.plain[i:j:j])
}

// Decimal returns a decimal column's numbers, row i being
// digits[i]·10^−scale[i] exactly; ok is false for the other forms. Neither
// slice may be changed.
func (t Text) Decimal() (digits []int64, scale []uint8, ok bool) {
	if t.kind != decimal {
		return nil, nil, false
	}
	return t.digits, t.scale, true
}

// Decimals builds a column of numbers typed in decimal. A text written
// plainly — an optional minus, then digits with no leading zero (a lone 0
// before the point is fine), then optionally a point and at least one
// digit; at most 18 digits in all and not a negative zero — is stored as
// its digits and the count of them after the point, 9 bytes a row, and
// reads back as the same text. The first text written otherwise turns the
// column into a packed one. The zero Decimals is ready to use.
type Decimals struct {
	digits []int64
	scale  []uint8
	p      Packer
	packed bool
}

// Grow makes room for n more rows holding about size bytes of text.
func (d *Decimals) Grow(n, size int) {
	if d.packed {
		d.p.Grow(n, size)
		return
	}
	d.digits, d.scale = growTo(d.digits, len(d.digits)+n), growTo(d.scale, len(d.scale)+n)
}

// Add appends one row.
func (d *Decimals) Add(b []byte) {
	if !d.packed {
		if m, sc, ok := plainDecimal(b); ok {
			d.digits, d.scale = append(d.digits, m), append(d.scale, sc)
			return
		}
		// Pack what is there, and the rest as it comes.
		d.packed = true
		d.p.Grow(len(d.digits)+1, 8*(len(d.digits)+1))
		var buf []byte
		for i, m := range d.digits {
			buf = formatDecimal(buf[:0], m, d.scale[i])
			d.p.Add(buf)
		}
		d.digits, d.scale = nil, nil
	}
	d.p.Add(b)
}

// AddPlain appends b and reports true when b is written plainly and the
// column still holds numbers; otherwise it adds nothing and reports false
// (the caller may then judge b and Add it).
func (d *Decimals) AddPlain(b []byte) bool {
	if d.packed {
		return false
	}
	m, sc, ok := plainDecimal(b)
	if ok {
		d.digits, d.scale = append(d.digits, m), append(d.scale, sc)
	}
	return ok
}

// Err reports a packed column too large (see Packer.Err).
func (d *Decimals) Err() error { return d.p.Err() }

// Text returns the column and resets the builder.
func (d *Decimals) Text() Text {
	var t Text
	if d.packed {
		t = d.p.Text()
	} else if len(d.digits) > 0 {
		t = Text{digits: d.digits, scale: d.scale, kind: decimal}
	}
	*d = Decimals{}
	return t
}

// plainDecimal parses b when it is written plainly (see Decimals).
func plainDecimal(b []byte) (m int64, scale uint8, ok bool) {
	i, neg := 0, false
	if len(b) > 0 && b[0] == '-' {
		neg, i = true, 1
	}
	start, n := i, 0
	for ; i < len(b) && b[i] >= '0' && b[i] <= '9'; i++ {
		m = m*10 + int64(b[i]-'0')
		if n++; n > 18 {
			return 0, 0, false
		}
	}
	if i == start || b[start] == '0' && i-start > 1 {
		return 0, 0, false // no digit before the point, or a leading zero
	}
	if i < len(b) {
		if b[i] != '.' || i+1 == len(b) {
			return 0, 0, false
		}
		for i++; i < len(b); i++ {
			c := b[i]
			if c < '0' || c > '9' {
				return 0, 0, false
			}
			m = m*10 + int64(c-'0')
			scale++
			if n++; n > 18 {
				return 0, 0, false
			}
		}
	}
	if neg {
		if m == 0 {
			return 0, 0, false // -0 would read back as 0
		}
		m = -m
	}
	return m, scale, true
}

// formatDecimal appends m·10^−scale as plainDecimal reads it.
func formatDecimal(dst []byte, m int64, scale uint8) []byte {
	u := uint64(m)
	if m < 0 {
		dst = append(dst, '-')
		u = uint64(-m)
	}
	var buf [24]byte
	d := strconv.AppendUint(buf[:0], u, 10)
	for len(d) <= int(scale) {
		d = append([]byte{'0'}, d...)
	}
	point := len(d) - int(scale)
	dst = append(dst, d[:point]...)
	if scale > 0 {
		dst = append(dst, '.')
		dst = append(dst, d[point:]...)
	}
	return dst
}
