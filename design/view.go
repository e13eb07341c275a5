package design

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
)

// View is a layout as the people who handle the units may see it: each
// unit's place and what its label shows as its treatment (the blind code
// for a blind plan), with the plan's fingerprint. It is what labels and
// recording sheets are printed from, and what scanned codes are matched
// against.
type View struct {
	// Layout is the layout. For a blind workbook read without its key the
	// plan is sealed (no seed) and every unit's Treatment is −1; use Shown.
	Layout Layout
	// Shown[i] is what unit Layout.Units[i] shows as its treatment: the
	// treatment name, or the blind code.
	Shown []string
	// Fingerprint is the full plan's fingerprint (64 hexadecimal digits),
	// the one a key file and `allot layout` print.
	Fingerprint string
}

// View returns the view of a complete layout (treatments known).
func (l Layout) View() View {
	v := View{Layout: l, Fingerprint: l.Plan.Fingerprint()}
	for _, u := range l.Units {
		v.Shown = append(v.Shown, l.Label(u))
	}
	return v
}

// Short returns the first ShortFingerprint hexadecimal digits of the
// fingerprint, the part printed on labels and encoded in unit codes.
func (v View) Short() string {
	if len(v.Fingerprint) < ShortFingerprint {
		return v.Fingerprint
	}
	return v.Fingerprint[:ShortFingerprint]
}

// Sequence returns the indices of the units (into Layout.Units) in the
// order they are handled: by block and, with byMeasurement, by the planned
// measurement order within the block; otherwise by position. It returns an
// error when byMeasurement is asked of a plan without a measurement order.
func (v View) Sequence(byMeasurement bool) ([]int, error) {
	if byMeasurement && !v.Layout.Plan.Order {
		return nil, fmt.Errorf("the plan has no measurement order (it was laid out without --order)")
	}
	idx := make([]int, len(v.Layout.Units))
	for i := range idx {
		idx[i] = i
	}
	us := v.Layout.Units
	sort.SliceStable(idx, func(a, b int) bool {
		ua, ub := us[idx[a]], us[idx[b]]
		if ua.Block != ub.Block {
			return ua.Block < ub.Block
		}
		if byMeasurement {
			return ua.Order < ub.Order
		}
		return ua.Position < ub.Position
	})
	return idx, nil
}

// ShortFingerprint is the number of fingerprint digits in a unit code.
const ShortFingerprint = 12

// CodePrefix starts every unit code.
const CodePrefix = "allot:"

// UnitCode returns the text encoded in a unit's 2-D code:
//
//	allot:<fingerprint12>:<unit ID>
//
// with the first 12 lower-case hexadecimal digits of the plan fingerprint
// and the unit ID; a subsample label (sub ≥ 1) appends "/<subsample>":
// allot:1d97e0af74ca:101/2. The text is printable ASCII, so that scanners
// that type what they read as keystrokes pass it on unchanged: in the unit
// ID every byte of its UTF-8 form outside "!".."~", and "%" and "/"
// themselves, is written %XX (upper-case hexadecimal, as in RFC 3986
// percent-encoding), so "Käfig 3" becomes K%C3%A4fig%203.
func UnitCode(fingerprint, unitID string, sub int) string {
	fp := fingerprint
	if len(fp) > ShortFingerprint {
		fp = fp[:ShortFingerprint]
	}
	s := CodePrefix + fp + ":" + escapeID(unitID)
	if sub > 0 {
		s += "/" + strconv.Itoa(sub)
	}
	return s
}

func escapeID(id string) string {
	var b strings.Builder
	for i := 0; i < len(id); i++ {
		c := id[i]
		if c <= ' ' || c > '~' || c == '%' || c == '/' {
			fmt.Fprintf(&b, "%%%02X", c)
		} else {
			b.WriteByte(c)
		}
	}
	return b.String()
}

func unescapeID(s string) (string, bool) {
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		if s[i] != '%' {
			b.WriteByte(s[i])
			continue
		}
		if i+2 >= len(s) {
			return "", false
		}
		v, err := strconv.ParseUint(s[i+1:i+3], 16, 8)
		if err != nil {
			return "", false
		}
		b.WriteByte(byte(v))
		i += 2
	}
	return b.String(), true
}

// CodeError is a text that is not a unit code.
type CodeError struct {
	Text string
	Msg  string
}

func (e *CodeError) Error() string {
	return fmt.Sprintf("%q is not an allot unit code: %s", e.Text, e.Msg)
}

// ParseUnitCode reads a unit code (surrounding white space and the case of
// the prefix and fingerprint do not matter): the fingerprint's first 12
// digits, the unit ID and the subsample (0 for a unit's own code).
func ParseUnitCode(s string) (fp12, unitID string, sub int, err error) {
	t := strings.TrimSpace(s)
	fail := func(msg string) (string, string, int, error) { return "", "", 0, &CodeError{Text: s, Msg: msg} }
	if !strings.HasPrefix(strings.ToLower(t), CodePrefix) {
		return fail("it does not begin with " + strconv.Quote(CodePrefix))
	}
	t = t[len(CodePrefix):]
	if len(t) < ShortFingerprint+2 || t[ShortFingerprint] != ':' {
		return fail("the 12-digit plan fingerprint and a unit ID must follow, as in allot:1d97e0af74ca:101")
	}
	fp12 = strings.ToLower(t[:ShortFingerprint])
	for _, c := range fp12 {
		if !('0' <= c && c <= '9' || 'a' <= c && c <= 'f') {
			return fail("the plan fingerprint must be 12 hexadecimal digits")
		}
	}
	rest := t[ShortFingerprint+1:]
	if k := strings.IndexByte(rest, '/'); k >= 0 {
		n, err := strconv.Atoi(rest[k+1:])
		if err != nil || n < 1 || strings.HasPrefix(rest[k+1:], "+") {
			return fail("a subsample number (1, 2, …) must follow the \"/\"")
		}
		rest, sub = rest[:k], n
	}
	id, ok := unescapeID(rest)
	if !ok || id == "" {
		return fail("the unit ID is empty or has a broken %XX escape")
	}
	return fp12, id, sub, nil
}

// Finder returns a function that finds a unit by its ID: its index in
// Layout.Units, or ok false.
func (v View) Finder() func(id string) (unit int, ok bool) {
	index := make(map[string]int, len(v.Layout.Units))
	for i, u := range v.Layout.Units {
		index[u.ID] = i
	}
	return func(id string) (int, bool) {
		i, ok := index[id]
		return i, ok
	}
}
