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
// and the unit ID as written; a subsample label (sub ≥ 1) appends
// "/<subsample>" to the unit ID: allot:1d97e0af74ca:101/2.
func UnitCode(fingerprint, unitID string, sub int) string {
	fp := fingerprint
	if len(fp) > ShortFingerprint {
		fp = fp[:ShortFingerprint]
	}
	s := CodePrefix + fp + ":" + unitID
	if sub > 0 {
		s += "/" + strconv.Itoa(sub)
	}
	return s
}

// CodeError is a text that is not a unit code.
type CodeError struct {
	Text string
	Msg  string
}

func (e *CodeError) Error() string {
	return fmt.Sprintf("%q is not an allot unit code: %s", e.Text, e.Msg)
}

// ParseUnitCode splits a unit code into the fingerprint's first 12 digits
// and the rest (the unit ID, possibly followed by "/<subsample>"; see
// View.Finder, which resolves it against the units).
func ParseUnitCode(s string) (fp12, rest string, err error) {
	t := strings.TrimSpace(s)
	if !strings.HasPrefix(strings.ToLower(t), CodePrefix) {
		return "", "", &CodeError{Text: s, Msg: "it does not begin with " + strconv.Quote(CodePrefix)}
	}
	t = t[len(CodePrefix):]
	if len(t) < ShortFingerprint+2 || t[ShortFingerprint] != ':' {
		return "", "", &CodeError{Text: s, Msg: "the 12-digit plan fingerprint and a unit ID must follow, as in allot:1d97e0af74ca:101"}
	}
	fp12 = strings.ToLower(t[:ShortFingerprint])
	for _, c := range fp12 {
		if !('0' <= c && c <= '9' || 'a' <= c && c <= 'f') {
			return "", "", &CodeError{Text: s, Msg: "the plan fingerprint must be 12 hexadecimal digits"}
		}
	}
	return fp12, t[ShortFingerprint+1:], nil
}

// Finder returns a function that resolves the unit part of a code (after
// the fingerprint) to a unit index and subsample (0 for a code without
// one). An exact unit ID wins; otherwise a trailing "/<n>" is read as the
// subsample. ok is false when no unit matches.
func (v View) Finder() func(rest string) (unit, sub int, ok bool) {
	index := make(map[string]int, len(v.Layout.Units))
	for i, u := range v.Layout.Units {
		index[u.ID] = i
	}
	return func(rest string) (int, int, bool) {
		if i, ok := index[rest]; ok {
			return i, 0, true
		}
		k := strings.LastIndexByte(rest, '/')
		if k < 0 {
			return 0, 0, false
		}
		n, err := strconv.Atoi(rest[k+1:])
		if err != nil || n < 1 {
			return 0, 0, false
		}
		i, ok := index[rest[:k]]
		return i, n, ok
	}
}
