package design

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
)

// Key is the unblinding key of a blind layout: the seed (which, with the
// plan, re-derives the allocation), the secret (which, with the seed,
// re-derives the codes) and what each code stands for. It is written to its
// own file, readable by its owner only, and kept from the people who score
// outcomes; the workbook holds the plan without its seed and the codes
// without their meaning.
//
// A key of format KeyFormat carries a MAC: HMAC-SHA256 under its secret
// (RFC 2104) of "allot-key-2", a NUL byte and the key's JSON without the
// MAC. ParseKey refuses a key whose MAC does not match, so a key with
// codes swapped or reordered by hand does not unblind. (Anyone holding the
// key can recompute the MAC; it guards against edits and mix-ups, not
// against the key's holder. randomize.Unblind re-derives the codes from seed
// and secret as well, which catches the rest.)
type Key struct {
	Format string `json:"format"` // KeyFormat, or KeyFormatV1 for keys of earlier versions
	// Fingerprint is the plan's fingerprint (Plan.Fingerprint: of the
	// sealed plan, for BlindMode plans; of the full plan in KeyFormatV1).
	Fingerprint string   `json:"plan_fingerprint"`
	Seed        SeedText `json:"seed"` // a string in the file; numbers are read too
	Generator   string   `json:"generator,omitempty"`
	BlindMode   string   `json:"blind_mode,omitempty"`
	Secret      string   `json:"secret,omitempty"` // hexadecimal, at least 16 bytes
	Treatments  []string `json:"treatments"`
	// Codes holds the code of each treatment (BlindTreatment and v1).
	Codes []string `json:"codes,omitempty"`
	// Units holds each unit's code and treatment (BlindUnit).
	Units []KeyUnit `json:"units,omitempty"`
	MAC   string    `json:"mac,omitempty"`
}

// KeyUnit is one unit of a per-unit key.
type KeyUnit struct {
	ID        string `json:"id"`
	Code      string `json:"code"`
	Treatment string `json:"treatment"`
}

// Key formats.
const (
	KeyFormat   = "allot-key-2"
	KeyFormatV1 = "allot-key-1"
)

// MinSecretBytes is the least length of a blind-code secret: 128 bits.
const MinSecretBytes = 16

// KeyOf returns the key of a blind layout (unblinded, with its secret).
func KeyOf(l Layout) Key {
	p := l.Plan
	k := Key{Format: KeyFormat, Fingerprint: p.Fingerprint(), Seed: SeedText(p.Seed), Generator: p.Generator, BlindMode: p.BlindMode}
	tr := p.Treatments()
	for _, t := range tr {
		k.Treatments = append(k.Treatments, t.Name)
	}
	if p.BlindMode == "" {
		k.Format, k.Codes = KeyFormatV1, l.Codes
		return k
	}
	k.Secret = hex.EncodeToString(l.Secret)
	if p.BlindMode == BlindUnit {
		for _, u := range l.Units {
			k.Units = append(k.Units, KeyUnit{ID: u.ID, Code: u.Code, Treatment: tr[u.Treatment].Name})
		}
	} else {
		k.Codes = l.Codes
	}
	k.MAC = k.mac()
	return k
}

// WriteKey writes k as a key file: indented JSON, as ParseKey reads it.
// allot layout --key and the layout page of allot serve both write keys
// with it, so that their files have one format.
func WriteKey(w io.Writer, k Key) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(k)
}

func (k Key) mac() string {
	secret, _ := hex.DecodeString(k.Secret)
	k.MAC = ""
	b, err := json.Marshal(k)
	if err != nil {
		panic("design: key does not marshal: " + err.Error())
	}
	m := hmac.New(sha256.New, secret)
	m.Write([]byte(KeyFormat + "\x00"))
	m.Write(b)
	return hex.EncodeToString(m.Sum(nil))
}

// SecretBytes returns the key's secret.
func (k Key) SecretBytes() []byte {
	b, _ := hex.DecodeString(k.Secret)
	return b
}

// Digest returns the SHA-256 of the key's content, in hexadecimal: a name
// for the key that can be recorded without revealing it.
func (k Key) Digest() string {
	b, _ := json.Marshal(k)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// ParseKey decodes a key file and checks its MAC.
func ParseKey(b []byte) (Key, error) {
	var k Key
	if err := json.Unmarshal(b, &k); err != nil {
		return Key{}, fmt.Errorf("not an allot key file: %w", err)
	}
	switch k.Format {
	case KeyFormatV1:
		if len(k.Codes) != len(k.Treatments) || k.Fingerprint == "" {
			return Key{}, fmt.Errorf("not an allot key file (format %q, %d codes for %d treatments)", k.Format, len(k.Codes), len(k.Treatments))
		}
		return k, nil
	case KeyFormat:
	default:
		return Key{}, fmt.Errorf("not an allot key file (format %q)", k.Format)
	}
	secret, err := hex.DecodeString(k.Secret)
	if err != nil || len(secret) < MinSecretBytes {
		return Key{}, fmt.Errorf("the key's secret is missing or shorter than %d bytes: the key file was edited or truncated", MinSecretBytes)
	}
	if k.Fingerprint == "" || (k.BlindMode != BlindTreatment && k.BlindMode != BlindUnit) {
		return Key{}, fmt.Errorf("the key names no plan or blind mode: the key file was edited")
	}
	want := k.mac()
	if !hmac.Equal([]byte(want), []byte(k.MAC)) {
		return Key{}, fmt.Errorf("the key's check (MAC under its secret) does not match its content: codes, treatments or seed were edited; use the key file exactly as allot layout wrote it")
	}
	return k, nil
}

// Sealed returns what may be shown to people who must stay blind: the plan
// without its seed. For a plan with a BlindMode its fingerprint is the full
// plan's (Fingerprint leaves the seed out); for earlier blind plans it
// differs, and the full plan's fingerprint is kept beside it so that a key
// can be checked.
func (p Plan) Sealed() Plan {
	s := p
	s.Seed = 0
	return s
}
