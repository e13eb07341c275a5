// Package randomize turns a plan and a seed into a layout: which unit gets
// which treatment. The algorithm is fixed and documented so that anyone can
// re-derive a layout from the recorded plan, with this package or without
// it; the same seed gives the same layout in every release.
//
// # Algorithm "allot-pcg-v1"
//
//  1. Streams. For block b (1-based; a completely randomised plan is one
//     block, b = 1) the stream seed is z_b = mix(seed + b·γ) with
//     γ = 0x9E3779B97F4A7C15 and mix the SplitMix64 finaliser
//     (Steele, Lea and Flood 2014, "Fast splittable pseudorandom number
//     generators", OOPSLA '14):
//     z ^= z >> 30; z *= 0xBF58476D1CE4E5B9; z ^= z >> 27;
//     z *= 0x94D049BB133111EB; z ^= z >> 31 (all arithmetic mod 2^64).
//     The stream is golang.org/x/exp/rand's PCGSource seeded with z_b
//     (PCG XSL RR 128/64, O'Neill 2014): the 128-bit state starts as
//     z_b·(2^64 + 1) (both 64-bit words equal to z_b); each draw sets
//     s = s·M + C mod 2^128, with M = 47026247687942121848144207491837523525
//     and C = 117397592171526113268558934119004209487, and returns
//     rotr64(hi ⊕ lo, hi >> 58), hi and lo the state's upper and lower words.
//     testdata/reference/allot_pcg_v1.py re-implements the whole algorithm
//     from this description, and the tests compare the two.
//
//  2. Bounded integers. A uniform integer in [0, n) is drawn by rejection:
//     with t = 2^64 mod n, draw 64-bit x until x ≥ t, then return x mod n
//     (no modulo bias).
//
//  3. Shuffle. The block's treatment list is built in plan order, treatment
//     i repeated Reps[i] times. For i from len−1 down to 1, draw j uniform in
//     [0, i] and swap entries i and j (Fisher and Yates; Durstenfeld 1964,
//     CACM 7(7) 420). Entry k then goes to position k+1 of the block.
//
//  4. Unit lists. A block of a given unit list holds its units in list
//     order (position k+1 is the block's k-th unit). For a randomised
//     complete block design with nt treatments and a block of s = q·nt + r
//     units, the treatment list is q copies of each treatment in plan order
//     followed by the first r entries of a Fisher–Yates shuffle of
//     0..nt−1 drawn from the block's stream; the list is then shuffled by
//     step 3, continuing the same stream.
//
//  5. Measurement order (Plan.Order). Block b's order comes from stream
//     2^32 + b: the list 1..s is shuffled by step 3 and entry k is the rank
//     in which the unit at position k+1 is measured.
//
//  6. Blind codes (Plan.Blind). Plans with a BlindMode draw them from a
//     keyed stream: 64-bit words, read little-endian, of the successive
//     HMAC-SHA256 (RFC 2104) values under the plan's secret (32 bytes from
//     crypto/rand, kept only in the key file) of the ASCII text
//     "allot-codes-v2" followed by the seed and a counter 0, 1, 2, … as
//     8-byte little-endian integers, each value giving 4 words. Each code
//     is L characters drawn uniformly (step 2) from the alphabet
//     "ACDEFHJKMNPRTUVWXY3479", which leaves out characters that are easily
//     misread for each other (0/O/D… are reduced to one; 1, I, L; 2, Z; 5,
//     S; 6, G; 8, B); a code equal to an earlier one is drawn again. With n
//     codes, L is the least length of at least 3 with 22^L ≥ 100·n (3 up to
//     106 codes). BlindMode "treatment" gives n = the number of treatments,
//     one code per treatment in plan order; "unit" gives one code per unit,
//     in layout order (block, then position), so that units sharing a code
//     no longer reveal that they share a treatment. The allocation (steps
//     1–5, 7, 8) does not depend on the secret: the same seed gives the same
//     allocation and, with a new secret, new codes. The seed of a blind plan
//     is kept with the key as well, since the allocation follows from it.
//     Plans without a BlindMode (written by earlier versions) took L = 3
//     codes, one per treatment, from stream 2^33 instead of the keyed
//     stream; Codes reproduces them.
//
//  7. Spares (Plan.PerBlock = K, a unit list in blocks). A block with s > K
//     units shuffles the list 0..s−1 by step 3 with stream 2^34 + b; the
//     units at the first K entries are laid out, in list order (position
//     k+1 is the k-th of them), and the others are spare: no treatment, no
//     row. The choice depends on the seed alone, is made before and
//     independently of the allocation, and every K-subset is equally
//     likely. Steps 3 and 4 then treat the block as one of K units.
//
//  8. Grids with more places than units (Grid.Placement "random"). A block
//     of s units on a grid of P > s places shuffles the places 1..P by step
//     3 with stream 2^35 + b and takes the first s, in ascending order:
//     position k+1 goes to the k-th smallest of them, which the numbering
//     (rows or serpentine) turns into a row and column. Every s-subset of
//     places is equally likely. Without Placement, position k is place k.
//
//  9. Split plots (design "split-plot"; a documented extension of this
//     generator: it applies only to this design kind, so the layouts of
//     every earlier plan are unchanged). With a whole-plot treatments
//     (the full factorial of the whole-plot factors, first varying
//     slowest), c sub-plot treatments and r main plots per whole-plot
//     treatment in each block, block b (one block without blocks) has
//     m = a·r main plots. Its whole-plot list, whole-plot treatment i
//     repeated r times in plan order, is shuffled by step 3 with the
//     block's stream b; main plot k (1-based within the block, number
//     g = (b−1)·m + k overall) receives entry k−1. Then, for each main plot
//     in turn, the list 0..c−1 of sub-plot treatments is shuffled by step 3
//     with its own stream 2^36 + g, and entry j goes to the main plot's
//     sub-plot j+1, which is position (k−1)·c + j + 1 of the block; the
//     unit's treatment is i·c + (sub-plot treatment). The streams of
//     different main plots are independent, so the sub-plot layout of one
//     main plot does not depend on any other's. A measurement order
//     (step 5) follows as for any block.
//
//  10. Latin squares (design "latin", likewise an extension that applies
//     only to this kind). Square b (one block per square) with t treatments
//     draws, from its stream b and in this order, three shuffles (step 3)
//     of 0..t−1: R for the rows, C for the columns and S for the symbols.
//     The cell in row i and column j (0-based) receives treatment
//     S[(R[i] + C[j]) mod t]: the cyclic square with its rows, columns and
//     symbols permuted at random. Position k+1 of the square is row
//     ⌊k/t⌋+1, column (k mod t)+1. Each square isotopic to the cyclic one
//     is equally likely (the three permutations are uniform and
//     independent, so the draw is uniform over the orbit of the cyclic
//     square under row, column and symbol permutations). For t ≤ 3 that
//     orbit is every Latin square; for t ≥ 4 it is not: squares that are
//     not isotopic to a cyclic group's table (for t = 4, those from the
//     table of the Klein four-group) are never drawn. The method is NOT
//     uniform over all Latin squares for t ≥ 4; for the analysis only the
//     randomisation of rows, columns and treatment labels matters
//     (Fisher and Yates, Statistical Tables, 1938, introduction; Bailey
//     2008, Design of Comparative Experiments, section 6.3).
//
// Rejected alternatives: one stream for all blocks would make each block's
// layout depend on the sizes of the blocks before it, so a plan with one
// more block would reshuffle all later ones; math/rand's Intn is not
// guaranteed stable across Go releases. Blind codes drawn from the seed
// (as before BlindMode) can be recovered by anyone who searches small or
// printed seeds; a PCG stream seeded from a hash of the secret would pass
// the 256-bit secret through a 64-bit seed; HMAC-SHA256 keeps the whole
// secret, is a published standard (RFC 2104, FIPS 198-1) and is in every
// language's standard library, so the keyed stream stays re-implementable
// from this description (testdata/reference/allot_pcg_v1.py does).
package randomize

import (
	"crypto/hmac"
	crand "crypto/rand"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash"
	"sort"

	"github.com/allotproject/allot/design"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// Generator names the algorithm above; plans record it.
const Generator = "allot-pcg-v1"

const gamma = 0x9E3779B97F4A7C15

// mix is the SplitMix64 finaliser.
func mix(z uint64) uint64 {
	z ^= z >> 30
	z *= 0xBF58476D1CE4E5B9
	z ^= z >> 27
	z *= 0x94D049BB133111EB
	z ^= z >> 31
	return z
}

// Stream returns the random source of stream b for seed (step 1).
func Stream(seed, b uint64) *rand.PCGSource {
	src := &rand.PCGSource{}
	src.Seed(mix(seed + b*gamma))
	return src
}

// Bounded returns a uniform integer in [0, n) from src (step 2). It panics
// for n == 0.
func Bounded(src rand.Source, n uint64) uint64 {
	if n == 0 {
		panic("randomize: Bounded with n == 0")
	}
	t := -n % n
	for {
		if x := src.Uint64(); x >= t {
			return x % n
		}
	}
}

// Shuffle permutes s in place by Fisher–Yates with draws from src (step 3).
func Shuffle(src rand.Source, s []int) {
	for i := len(s) - 1; i > 0; i-- {
		j := Bounded(src, uint64(i+1))
		s[i], s[j] = s[j], s[i]
	}
}

// NewSeed draws a seed from the operating system's random source, for plans
// that do not give one.
func NewSeed() (uint64, error) {
	var b [8]byte
	if _, err := crand.Read(b[:]); err != nil {
		return 0, fmt.Errorf("drawing a seed: %w", err)
	}
	return binary.LittleEndian.Uint64(b[:]), nil
}

// Stream offsets of steps 5 to 8.
const (
	orderStream = 1 << 32
	codeStream  = 1 << 33
	spareStream = 1 << 34
	placeStream = 1 << 35
)

// CodeAlphabet is the alphabet of blind codes (step 6).
const CodeAlphabet = "ACDEFHJKMNPRTUVWXY3479"

// CodeLength is the number of characters of a blind code drawn from the
// seed (step 6, plans without a BlindMode).
const CodeLength = 3

// SecretBytes is the length of the secret drawn for blind codes: 256 bits.
const SecretBytes = 32

// NewSecret draws a blind-code secret from the operating system's random
// source (crypto/rand).
func NewSecret() ([]byte, error) {
	b := make([]byte, SecretBytes)
	if _, err := crand.Read(b); err != nil {
		return nil, fmt.Errorf("drawing the blinding secret: %w", err)
	}
	return b, nil
}

// Assign lays out the plan with its seed. The plan must be valid; its
// Generator must be empty or Generator, and is set to Generator. A blind
// plan with a BlindMode gets a fresh secret from crypto/rand, so two runs
// with the same seed give the same allocation and different codes; the
// layout's Secret holds it for the key.
func Assign(p design.Plan) (design.Layout, error) {
	var secret []byte
	if p.Blind && p.BlindMode != "" {
		var err error
		if secret, err = NewSecret(); err != nil {
			return design.Layout{}, err
		}
	}
	return AssignSecret(p, secret)
}

// AssignSecret lays out the plan with its seed and, for a blind plan with a
// BlindMode, the codes from secret (at least 16 bytes; step 6).
func AssignSecret(p design.Plan, secret []byte) (design.Layout, error) {
	if p.Generator == "" {
		p.Generator = Generator
	}
	if p.Generator != Generator {
		return design.Layout{}, fmt.Errorf("plan asks for generator %q; this version of allot implements %q", p.Generator, Generator)
	}
	if err := p.Validate(); err != nil {
		return design.Layout{}, err
	}
	keyed := p.Blind && p.BlindMode != ""
	if keyed && len(secret) < design.MinSecretBytes {
		return design.Layout{}, fmt.Errorf("a blind plan needs a secret of at least %d bytes for its codes", design.MinSecretBytes)
	}
	byBlock := make([][]design.UnitSpec, p.Blocks+1)
	for _, u := range p.Units {
		byBlock[u.Block] = append(byBlock[u.Block], u)
	}
	l := design.Layout{Plan: p, Units: make([]design.Unit, 0, p.NumUnits())}
	sizes := p.BlockSizes()
	for b := 1; b <= p.Blocks && p.Strata(); b++ {
		l.Units = append(l.Units, assignStrata(p, b)...) // steps 9 and 10
	}
	for b := 1; b <= p.Blocks && !p.Strata(); b++ {
		var used []design.UnitSpec
		if p.Units != nil {
			var spares []design.UnitSpec
			used, spares = takePerBlock(p.Seed, b, byBlock[b], p.PerBlock)
			for _, u := range spares {
				l.Spares = append(l.Spares, design.Spare{ID: u.ID, Block: b})
			}
		}
		l.Units = append(l.Units, assignBlock(p, b, sizes[b-1], used)...)
	}
	switch {
	case !p.Blind:
	case !keyed:
		l.Codes = Codes(p.Seed, len(p.Reps))
	case p.BlindMode == design.BlindUnit:
		codes := KeyedCodes(secret, p.Seed, len(l.Units))
		for i := range l.Units {
			l.Units[i].Code = codes[i]
		}
	default:
		l.Codes = KeyedCodes(secret, p.Seed, len(p.Reps))
		for i := range l.Units {
			l.Units[i].Code = l.Codes[l.Units[i].Treatment]
		}
	}
	if keyed {
		l.Secret = append([]byte(nil), secret...)
	}
	if err := l.Check(); err != nil {
		panic("randomize: layout breaks its invariants: " + err.Error())
	}
	return l, nil
}

// takePerBlock splits block b's units (list order) into those laid out and
// the spares (step 7).
func takePerBlock(seed uint64, b int, units []design.UnitSpec, k int) (used, spare []design.UnitSpec) {
	if k == 0 || len(units) <= k {
		return units, nil
	}
	idx := make([]int, len(units))
	for i := range idx {
		idx[i] = i
	}
	Shuffle(Stream(seed, spareStream+uint64(b)), idx)
	take := make([]bool, len(units))
	for _, i := range idx[:k] {
		take[i] = true
	}
	for i, u := range units {
		if take[i] {
			used = append(used, u)
		} else {
			spare = append(spare, u)
		}
	}
	return used, spare
}

// assignBlock lays out block b (steps 3, 4, 5 and 8); used holds the
// block's units of a unit list (nil without one).
func assignBlock(p design.Plan, b, size int, used []design.UnitSpec) []design.Unit {
	nt := len(p.Reps)
	src := Stream(p.Seed, uint64(b))
	slots := make([]int, 0, size)
	if p.Units != nil && p.Design == design.RCBD {
		for q := 0; q < size/nt; q++ {
			for t := 0; t < nt; t++ {
				slots = append(slots, t)
			}
		}
		if r := size % nt; r > 0 {
			extra := make([]int, nt)
			for t := range extra {
				extra[t] = t
			}
			Shuffle(src, extra)
			slots = append(slots, extra[:r]...)
		}
	} else {
		for t, r := range p.Reps {
			for k := 0; k < r; k++ {
				slots = append(slots, t)
			}
		}
	}
	Shuffle(src, slots)
	var order []int
	if p.Order {
		order = make([]int, size)
		for k := range order {
			order[k] = k + 1
		}
		Shuffle(Stream(p.Seed, orderStream+uint64(b)), order)
	}
	places := gridPlaces(p, b, size)
	units := make([]design.Unit, len(slots))
	for k, t := range slots {
		u := design.Unit{Block: b, Position: k + 1, Treatment: t}
		if p.Units != nil {
			u.ID = used[k].ID
		} else {
			u.ID = design.UnitID(b, k+1, size)
		}
		if p.Grid != nil {
			u.Row, u.Col = p.Grid.Place(places[k])
		}
		if order != nil {
			u.Order = order[k]
		}
		units[k] = u
	}
	return units
}

// gridPlaces returns the grid place of each position of block b: position
// k+1 on place k+1, or with Placement RandomPlaces and more places than
// units, on the k-th smallest of size places chosen at random (step 8).
func gridPlaces(p design.Plan, b, size int) []int {
	g := p.Grid
	if g == nil {
		return nil
	}
	n := g.Rows * g.Cols
	places := make([]int, n)
	for i := range places {
		places[i] = i + 1
	}
	if g.Placement == design.RandomPlaces && n > size {
		Shuffle(Stream(p.Seed, placeStream+uint64(b)), places)
		places = places[:size]
		sort.Ints(places)
	}
	return places[:size]
}

// Codes returns n distinct blind codes from seed (step 6, plans without a
// BlindMode).
func Codes(seed uint64, n int) []string {
	return drawCodes(Stream(seed, codeStream), n, CodeLength)
}

// KeyedCodes returns n distinct blind codes from secret and seed (step 6).
func KeyedCodes(secret []byte, seed uint64, n int) []string {
	return drawCodes(newKeyedSource(secret, seed), n, KeyedCodeLength(n))
}

// KeyedCodeLength returns the length of keyed codes for n codes: the least
// L ≥ 3 with 22^L ≥ 100·n, so that at most 1 in 100 draws repeats a code.
func KeyedCodeLength(n int) int {
	l, space := 3, len(CodeAlphabet)*len(CodeAlphabet)*len(CodeAlphabet)
	for space < 100*n {
		l++
		space *= len(CodeAlphabet)
	}
	return l
}

func drawCodes(src rand.Source, n, length int) []string {
	seen := make(map[string]bool, n)
	out := make([]string, 0, n)
	b := make([]byte, length)
	for len(out) < n {
		for i := range b {
			b[i] = CodeAlphabet[Bounded(src, uint64(len(CodeAlphabet)))]
		}
		if c := string(b); !seen[c] {
			seen[c] = true
			out = append(out, c)
		}
	}
	return out
}

// keyedSource is the keyed stream of step 6: 64-bit words from
// HMAC-SHA256(secret, "allot-codes-v2" ‖ seed ‖ counter).
type keyedSource struct {
	mac     hash.Hash
	seed    uint64
	counter uint64
	buf     [4]uint64
	n       int
}

func newKeyedSource(secret []byte, seed uint64) *keyedSource {
	return &keyedSource{mac: hmac.New(sha256.New, secret), seed: seed}
}

func (k *keyedSource) Uint64() uint64 {
	if k.n == 0 {
		var msg [len(codeLabel) + 16]byte
		copy(msg[:], codeLabel)
		binary.LittleEndian.PutUint64(msg[len(codeLabel):], k.seed)
		binary.LittleEndian.PutUint64(msg[len(codeLabel)+8:], k.counter)
		k.counter++
		k.mac.Reset()
		k.mac.Write(msg[:])
		sum := k.mac.Sum(nil)
		for i := range k.buf {
			k.buf[i] = binary.LittleEndian.Uint64(sum[8*i:])
		}
		k.n = 4
	}
	v := k.buf[4-k.n]
	k.n--
	return v
}

// Seed is a no-op: the keyed stream is set by its secret and seed.
func (k *keyedSource) Seed(uint64) {}

const codeLabel = "allot-codes-v2"

// Unblind checks the key k against the sealed layout s (the plan without
// its seed, each unit with its code, as a blind workbook or layout file
// holds it) and returns the unblinded layout. It re-derives the allocation
// from the key's seed and the codes from its secret, and refuses a key whose
// codes differ from the derived ones (edited or reordered), or that gives
// any unit another code than s shows (a key of another randomisation).
func Unblind(s design.Layout, k design.Key) (design.Layout, error) {
	p := s.Plan
	if !p.Blind {
		return design.Layout{}, fmt.Errorf("the layout is not blind; it needs no key")
	}
	full := p
	full.Seed = uint64(k.Seed)
	var secret []byte
	switch {
	case k.Format == design.KeyFormatV1 && p.BlindMode == "":
		if full.Fingerprint() != k.Fingerprint {
			return design.Layout{}, fmt.Errorf("the key belongs to another plan (its fingerprint and seed do not reproduce this plan's); give the key file written with this layout")
		}
	case k.Format == design.KeyFormat && p.BlindMode != "":
		if k.Fingerprint != p.Fingerprint() || k.BlindMode != p.BlindMode {
			return design.Layout{}, fmt.Errorf("the key belongs to another plan (fingerprint %.12s, not %.12s); give the key file written with this layout", k.Fingerprint, p.Fingerprint())
		}
		secret = k.SecretBytes()
	default:
		return design.Layout{}, fmt.Errorf("the key (format %s) does not fit this plan's blinding; give the key file written with this layout", k.Format)
	}
	d, err := AssignSecret(full, secret)
	if err != nil {
		return design.Layout{}, fmt.Errorf("the key's seed does not lay out this plan: %w", err)
	}
	if err := keyMatches(d, k); err != nil {
		return design.Layout{}, err
	}
	if len(s.Units) != len(d.Units) {
		return design.Layout{}, fmt.Errorf("the layout has %d units, the key's plan %d", len(s.Units), len(d.Units))
	}
	byID := make(map[string]design.Unit, len(d.Units))
	for _, u := range d.Units {
		byID[u.ID] = u
	}
	for _, u := range s.Units {
		w, ok := byID[u.ID]
		if !ok || w.Block != u.Block || w.Position != u.Position || d.Label(w) != s.Label(u) {
			return design.Layout{}, fmt.Errorf("unit %s shows code %s, but the key gives it %s: the key belongs to another randomisation of this plan (another seed or secret); give the key file written with this layout", u.ID, s.Label(u), d.Label(w))
		}
		delete(byID, u.ID)
	}
	return d, nil
}

// keyMatches compares the key's codes and treatments with the derived
// layout d.
func keyMatches(d design.Layout, k design.Key) error {
	tr := d.Plan.Treatments()
	edited := fmt.Errorf("the key's codes or treatments differ from those its seed and secret give: the key file was edited (codes reordered or swapped); use the key file exactly as allot layout wrote it")
	if len(k.Treatments) != len(tr) {
		return edited
	}
	for i, t := range tr {
		if k.Treatments[i] != t.Name {
			return edited
		}
	}
	if d.Plan.BlindMode == design.BlindUnit {
		if len(k.Units) != len(d.Units) {
			return edited
		}
		for i, u := range d.Units {
			if ku := k.Units[i]; ku.ID != u.ID || ku.Code != u.Code || ku.Treatment != tr[u.Treatment].Name {
				return edited
			}
		}
		return nil
	}
	if len(k.Codes) != len(d.Codes) {
		return edited
	}
	for i := range d.Codes {
		if k.Codes[i] != d.Codes[i] {
			return edited
		}
	}
	return nil
}

// Difference is a unit whose recorded assignment differs from the one the
// plan and seed give.
type Difference struct {
	Unit     string
	Recorded string // "block 2, position 3, treatment B" (or "missing")
	Derived  string
}

// Verify re-derives the layout from l's plan and seed (and, for a blind
// layout, its secret) and returns every unit that differs (nil when the
// layout matches): moved, missing, unknown, repeated or spare units.
func Verify(l design.Layout) ([]Difference, error) {
	if l.IsSealed() {
		return nil, fmt.Errorf("the layout is blind: give its key to re-derive it")
	}
	d, err := AssignSecret(l.Plan, l.Secret)
	if err != nil {
		return nil, err
	}
	describe := func(lay design.Layout, u design.Unit) string {
		s := fmt.Sprintf("block %d, position %d, treatment %s", u.Block, u.Position, lay.Plan.Treatments()[u.Treatment].Name)
		if u.Row > 0 {
			s += fmt.Sprintf(", row %d, column %d", u.Row, u.Col)
		}
		if u.Order > 0 {
			s += fmt.Sprintf(", order %d", u.Order)
		}
		if lay.Plan.Blind {
			s += ", code " + lay.Label(u)
		}
		return s
	}
	rec := make(map[string]design.Unit, len(l.Units))
	var diffs []Difference
	for _, u := range l.Units {
		if _, dup := rec[u.ID]; dup {
			diffs = append(diffs, Difference{Unit: u.ID, Recorded: "listed twice", Derived: "once"})
			continue
		}
		rec[u.ID] = u
	}
	for _, u := range d.Units {
		r, ok := rec[u.ID]
		switch {
		case !ok:
			diffs = append(diffs, Difference{Unit: u.ID, Recorded: "missing", Derived: describe(d, u)})
		case r.Treatment < 0 || r.Treatment >= len(l.Plan.Reps):
			diffs = append(diffs, Difference{Unit: u.ID, Recorded: fmt.Sprintf("treatment index %d", r.Treatment), Derived: describe(d, u)})
		case describe(l, r) != describe(d, u):
			diffs = append(diffs, Difference{Unit: u.ID, Recorded: describe(l, r), Derived: describe(d, u)})
		}
		delete(rec, u.ID)
	}
	for _, u := range l.Units {
		if r, ok := rec[u.ID]; ok {
			delete(rec, u.ID)
			what := "not in the plan"
			for _, s := range d.Spares {
				if s.ID == u.ID {
					what = "spare (not laid out)"
				}
			}
			rd := "a unit"
			if r.Treatment >= 0 && r.Treatment < len(l.Plan.Reps) {
				rd = describe(l, r)
			}
			diffs = append(diffs, Difference{Unit: u.ID, Recorded: rd, Derived: what})
		}
	}
	return append(diffs, spareDiffs(l.Spares, d.Spares)...), nil
}

// spareDiffs compares recorded and derived spare units.
func spareDiffs(recorded, derived []design.Spare) []Difference {
	var diffs []Difference
	spare := map[string]bool{}
	for _, s := range recorded {
		spare[s.ID] = true
	}
	for _, s := range derived {
		if !spare[s.ID] {
			diffs = append(diffs, Difference{Unit: s.ID, Recorded: "not marked spare", Derived: fmt.Sprintf("spare of block %d", s.Block)})
		}
		delete(spare, s.ID)
	}
	for _, s := range recorded {
		if spare[s.ID] {
			diffs = append(diffs, Difference{Unit: s.ID, Recorded: "marked spare", Derived: "laid out, or not in the plan"})
		}
	}
	return diffs
}
