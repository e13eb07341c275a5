package workbook

import (
	"bytes"
	"encoding/json"

	"github.com/allotproject/allot/design"
)

// decodeStored decodes the hidden sheet's document as
//
//	json.Unmarshal(doc, &st); json.Unmarshal(st.Units, &units)
//
// would, for a document in the form storedDoc writes (json.Marshal's
// output: keys in order, no spaces, strings without escapes, integers);
// ok is false for any other document, which the caller then gives to
// encoding/json. For 100,000 units encoding/json takes 0.2 s and copies
// the units' JSON twice; this reads each byte once. st.Units is left
// empty: the units are returned instead. The document is valid UTF-8
// (readData checks it first), so its strings need no repair.
func decodeStored(doc []byte) (st stored, units []design.Unit, ok bool) {
	d := docDecoder{b: doc}
	if !d.lit(`{"plan":`) {
		return stored{}, nil, false
	}
	from := d.i
	if !d.skipObject() || !json.Valid(doc[from:d.i]) {
		return stored{}, nil, false
	}
	st.Plan = append(json.RawMessage(nil), doc[from:d.i]...)
	if !d.lit(`,"units":[`) {
		return stored{}, nil, false
	}
	// Room for every unit: an object of the units, labels or spares
	// starts with {"id": (one append, not growth by copies of 10 MB).
	units = make([]design.Unit, 0, bytes.Count(doc[d.i:], []byte(`{"id":`)))
	for !d.lit("]") {
		if len(units) > 0 && !d.lit(",") {
			return stored{}, nil, false
		}
		u, ok := d.unit()
		if !ok {
			return stored{}, nil, false
		}
		units = append(units, u)
	}
	if d.lit(`,"labels":[`) {
		st.Labels = []string{}
		for !d.lit("]") {
			if len(st.Labels) > 0 && !d.lit(",") {
				return stored{}, nil, false
			}
			s, ok := d.str()
			if !ok {
				return stored{}, nil, false
			}
			st.Labels = append(st.Labels, s)
		}
	}
	if d.lit(`,"spares":[`) {
		st.Spares = []design.Spare{}
		for !d.lit("]") {
			var s design.Spare
			if len(st.Spares) > 0 && !d.lit(",") || !d.lit(`{"id":`) {
				return stored{}, nil, false
			}
			if s.ID, ok = d.str(); !ok || !d.lit(`,"block":`) {
				return stored{}, nil, false
			}
			if s.Block, ok = d.int(); !ok || !d.lit("}") {
				return stored{}, nil, false
			}
			st.Spares = append(st.Spares, s)
		}
	}
	if d.lit(`,"simulated":`) {
		if st.Simulated, ok = d.str(); !ok {
			return stored{}, nil, false
		}
	}
	if !d.lit("}") || d.i != len(doc) {
		return stored{}, nil, false
	}
	return st, units, true
}

// docDecoder reads the stored document from position i.
type docDecoder struct {
	b []byte
	i int
}

// lit consumes s when the document continues with it.
func (d *docDecoder) lit(s string) bool {
	if len(d.b)-d.i < len(s) || string(d.b[d.i:d.i+len(s)]) != s {
		return false
	}
	d.i += len(s)
	return true
}

// skipObject moves past a JSON object, finding its end by its brackets
// outside strings (the caller checks that it is valid JSON).
func (d *docDecoder) skipObject() bool {
	if d.i >= len(d.b) || d.b[d.i] != '{' {
		return false
	}
	depth := 0
	for d.i < len(d.b) {
		c := d.b[d.i]
		d.i++
		switch c {
		case '"':
			for d.i < len(d.b) && d.b[d.i] != '"' {
				if d.b[d.i] == '\\' {
					d.i++
				}
				d.i++
			}
			if d.i >= len(d.b) {
				return false
			}
			d.i++
		case '{', '[':
			depth++
		case '}', ']':
			if depth--; depth == 0 {
				return true
			}
		}
	}
	return false
}

// unit reads one unit object: id, block, position and treatment, then
// those of row, col, order, code and main_plot that are not zero, in the
// order of design.Unit's fields.
func (d *docDecoder) unit() (design.Unit, bool) {
	var u design.Unit
	ok := d.lit(`{"id":`)
	if ok {
		u.ID, ok = d.str()
	}
	for _, f := range []struct {
		key string
		dst *int
	}{{`,"block":`, &u.Block}, {`,"position":`, &u.Position}, {`,"treatment":`, &u.Treatment}} {
		if !ok || !d.lit(f.key) {
			return design.Unit{}, false
		}
		*f.dst, ok = d.int()
	}
	for _, f := range []struct {
		key string
		dst *int
	}{{`,"row":`, &u.Row}, {`,"col":`, &u.Col}, {`,"order":`, &u.Order}} {
		if ok && d.lit(f.key) {
			*f.dst, ok = d.int()
		}
	}
	if ok && d.lit(`,"code":`) {
		u.Code, ok = d.str()
	}
	if ok && d.lit(`,"main_plot":`) {
		u.MainPlot, ok = d.int()
	}
	if !ok || !d.lit("}") {
		return design.Unit{}, false
	}
	return u, true
}

// str reads a JSON string without escapes or control characters.
func (d *docDecoder) str() (string, bool) {
	if d.i >= len(d.b) || d.b[d.i] != '"' {
		return "", false
	}
	for j := d.i + 1; j < len(d.b); j++ {
		switch c := d.b[j]; {
		case c == '"':
			s := string(d.b[d.i+1 : j])
			d.i = j + 1
			return s, true
		case c == '\\' || c < 0x20:
			return "", false
		}
	}
	return "", false
}

// int reads a JSON integer of at most 18 digits (so that it fits an int
// as encoding/json's strconv.ParseInt would read it).
func (d *docDecoder) int() (int, bool) {
	j := d.i
	neg := j < len(d.b) && d.b[j] == '-'
	if neg {
		j++
	}
	from, n := j, 0
	for j < len(d.b) && d.b[j] >= '0' && d.b[j] <= '9' {
		n = n*10 + int(d.b[j]-'0')
		j++
	}
	digits := j - from
	if digits == 0 || digits > 18 || digits > 1 && d.b[from] == '0' {
		return 0, false
	}
	if j < len(d.b) && (d.b[j] == '.' || d.b[j] == 'e' || d.b[j] == 'E') {
		return 0, false
	}
	if neg {
		n = -n
	}
	d.i = j
	return n, true
}
