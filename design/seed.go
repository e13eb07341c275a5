package design

import (
	"bytes"
	"encoding/json"
	"fmt"
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

// DecodeLayout decodes a layout file (the JSON of allot layout -o FILE.json)
// and checks its plan and fingerprint, but not the assignment: allot layout
// verify reports a moved unit rather than refusing the file. ParseLayout
// checks the assignment too. The seed may be a string or a number.
func DecodeLayout(b []byte) (Layout, error) {
	var doc struct {
		Fingerprint string `json:"fingerprint"`
		Plan        struct {
			Plan
			Seed SeedText `json:"seed"`
		} `json:"plan"`
		Units []Unit   `json:"units"`
		Codes []string `json:"codes,omitempty"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		return Layout{}, fmt.Errorf("not a layout JSON file: %w", err)
	}
	plan := doc.Plan.Plan
	plan.Seed = uint64(doc.Plan.Seed)
	if err := plan.Validate(); err != nil {
		return Layout{}, fmt.Errorf("the recorded plan is not valid: %w", err)
	}
	if doc.Fingerprint != plan.Fingerprint() {
		return Layout{}, fmt.Errorf("the plan does not match its fingerprint %.12s…: the file was edited", doc.Fingerprint)
	}
	return Layout{Plan: plan, Units: doc.Units, Codes: doc.Codes}, nil
}

// LayoutDocument is the JSON form of a layout file: the fingerprint, the
// plan (its seed as a string) and the units. Its fields follow Layout's.
func LayoutDocument(l Layout) any {
	return struct {
		Fingerprint string `json:"fingerprint"`
		Plan        struct {
			Plan
			Seed SeedText `json:"seed"`
		} `json:"plan"`
		Units []Unit   `json:"units"`
		Codes []string `json:"codes,omitempty"`
	}{
		Fingerprint: l.Plan.Fingerprint(),
		Plan: struct {
			Plan
			Seed SeedText `json:"seed"`
		}{l.Plan, SeedText(l.Plan.Seed)},
		Units: l.Units,
		Codes: l.Codes,
	}
}
