package design

import (
	"encoding/json"
	"fmt"
)

// Key is the unblinding key of a blind layout: the seed (which, with the
// plan, re-derives everything) and the code of each treatment. It is written
// to its own file and kept from the people who score outcomes; the workbook
// holds the plan without its seed and the codes without their meaning.
type Key struct {
	Format      string   `json:"format"` // "allot-key-1"
	Fingerprint string   `json:"plan_fingerprint"`
	Seed        SeedText `json:"seed"` // a string in the file; numbers are read too
	Treatments  []string `json:"treatments"`
	Codes       []string `json:"codes"`
}

// KeyFormat identifies key files.
const KeyFormat = "allot-key-1"

// KeyOf returns the key of a blind layout.
func KeyOf(l Layout) Key {
	k := Key{Format: KeyFormat, Fingerprint: l.Plan.Fingerprint(), Seed: SeedText(l.Plan.Seed), Codes: l.Codes}
	for _, t := range l.Plan.Treatments() {
		k.Treatments = append(k.Treatments, t.Name)
	}
	return k
}

// ParseKey decodes a key file.
func ParseKey(b []byte) (Key, error) {
	var k Key
	if err := json.Unmarshal(b, &k); err != nil {
		return Key{}, fmt.Errorf("not an allot key file: %w", err)
	}
	if k.Format != KeyFormat || len(k.Codes) != len(k.Treatments) || k.Fingerprint == "" {
		return Key{}, fmt.Errorf("not an allot key file (format %q)", k.Format)
	}
	return k, nil
}

// Sealed returns what may be shown to people who must stay blind: the plan
// without its seed. Its fingerprint differs from the full plan's; the
// full plan's fingerprint is kept beside it so that a key can be checked.
func (p Plan) Sealed() Plan {
	s := p
	s.Seed = 0
	return s
}
