package design

import (
	"bytes"
	"encoding/json"
	"strconv"
	"strings"
)

// ParseSeed parses a seed: an unsigned 64-bit integer in decimal, the one
// form every allot input accepts (--seed, spec files, JSON). Surrounding
// spaces are ignored.
func ParseSeed(s string) (uint64, error) {
	t := strings.TrimSpace(s)
	v, err := strconv.ParseUint(t, 10, 64)
	if err != nil || t == "" || t[0] == '+' {
		return 0, errf("seed", "seed %q: must be an unsigned whole number below 2^64, for example 20261201", s)
	}
	return v, nil
}

// SeedText is a seed that JSON carries as a decimal string, because seeds
// of 2^63 and above are drawn and neither a signed 64-bit reader nor a
// floating-point one (JavaScript, many JSON libraries) keeps them exact.
// It reads back a string or a plain number, so older files still load;
// TOML spec files may give it as an integer or, for seeds of 2^63 and
// above (beyond TOML's integers), as a string.
type SeedText uint64

// MarshalJSON writes the seed as a decimal string.
func (s SeedText) MarshalJSON() ([]byte, error) {
	return []byte(`"` + strconv.FormatUint(uint64(s), 10) + `"`), nil
}

// UnmarshalJSON reads a decimal string or a number.
func (s *SeedText) UnmarshalJSON(b []byte) error {
	b = bytes.TrimSpace(b)
	text := string(b)
	if len(b) > 0 && b[0] == '"' {
		if err := json.Unmarshal(b, &text); err != nil {
			return err
		}
	}
	v, err := ParseSeed(text)
	if err != nil {
		return err
	}
	*s = SeedText(v)
	return nil
}

// UnmarshalTOML reads an integer or a decimal string (the toml.Unmarshaler
// interface of BurntSushi/toml).
func (s *SeedText) UnmarshalTOML(v any) error {
	switch x := v.(type) {
	case int64:
		if x < 0 {
			return errf("seed", "seed %d: must not be negative", x)
		}
		*s = SeedText(x)
		return nil
	case string:
		u, err := ParseSeed(x)
		if err != nil {
			return err
		}
		*s = SeedText(u)
		return nil
	}
	return errf("seed", "seed: give a whole number, or a quoted one such as \"18446744073709551615\" for seeds of 2^63 and above")
}

// LayoutDocument is the JSON form of a layout file (see LayoutDoc).
func LayoutDocument(l Layout) any {
	return LayoutDoc{Format: LayoutFormat, Fingerprint: l.Plan.Fingerprint(), Layout: l}
}

// layoutJSON is LayoutDoc on the wire: the plan's seed as a string (seeds
// of 2^63 and above do not survive JSON numbers in many readers), numbers
// accepted when reading.
type layoutJSON struct {
	Format      string `json:"format"`
	Fingerprint string `json:"fingerprint"`
	Plan        struct {
		Plan
		Seed SeedText `json:"seed"`
	} `json:"plan"`
	Units  []Unit   `json:"units"`
	Codes  []string `json:"codes,omitempty"`
	Spares []Spare  `json:"spares,omitempty"`
}

// MarshalJSON writes the layout file with the seed as a string.
func (d LayoutDoc) MarshalJSON() ([]byte, error) {
	var w layoutJSON
	w.Format, w.Fingerprint = d.Format, d.Fingerprint
	w.Plan.Plan, w.Plan.Seed = d.Plan, SeedText(d.Plan.Seed)
	w.Units, w.Codes, w.Spares = d.Units, d.Codes, d.Spares
	return json.Marshal(w)
}

// UnmarshalJSON reads a layout file, the seed a string or a number.
func (d *LayoutDoc) UnmarshalJSON(b []byte) error {
	var w layoutJSON
	if err := json.Unmarshal(b, &w); err != nil {
		return err
	}
	d.Format, d.Fingerprint = w.Format, w.Fingerprint
	d.Layout = Layout{Plan: w.Plan.Plan, Units: w.Units, Codes: w.Codes, Spares: w.Spares}
	d.Plan.Seed = uint64(w.Plan.Seed)
	return nil
}
