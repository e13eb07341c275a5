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
//  2. Bounded integers. A uniform integer in [0, n) is drawn by rejection:
//     with t = 2^64 mod n, draw 64-bit x until x ≥ t, then return x mod n
//     (no modulo bias).
//  3. Shuffle. The block's treatment list is built in plan order, treatment
//     i repeated Reps[i] times. For i from len−1 down to 1, draw j uniform in
//     [0, i] and swap entries i and j (Fisher and Yates; Durstenfeld 1964,
//     CACM 7(7) 420). Entry k then goes to position k+1 of the block.
//  4. Unit lists. A block of a given unit list holds its units in list
//     order (position k+1 is the block's k-th unit). For a randomised
//     complete block design with nt treatments and a block of s = q·nt + r
//     units, the treatment list is q copies of each treatment in plan order
//     followed by the first r entries of a Fisher–Yates shuffle of
//     0..nt−1 drawn from the block's stream; the list is then shuffled by
//     step 3, continuing the same stream.
//  5. Measurement order (Plan.Order). Block b's order comes from stream
//     2^32 + b: the list 1..s is shuffled by step 3 and entry k is the rank
//     in which the unit at position k+1 is measured.
//  6. Blind codes (Plan.Blind). From stream 2^33, each treatment in plan
//     order gets three characters drawn uniformly (step 2) from the
//     alphabet "ACDEFHJKMNPRTUVWXY3479", which leaves out characters that
//     are easily misread for each other (0/O/D… are reduced to one; 1, I,
//     L; 2, Z; 5, S; 6, G; 8, B); a code equal to an earlier one is
//     drawn again.
//
// Rejected alternatives: one stream for all blocks would make each block's
// layout depend on the sizes of the blocks before it, so a plan with one
// more block would reshuffle all later ones; math/rand's Intn is not
// guaranteed stable across Go releases.
package randomize

import (
	crand "crypto/rand"
	"encoding/binary"
	"fmt"

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

// Stream offsets of steps 5 and 6.
const (
	orderStream = 1 << 32
	codeStream  = 1 << 33
)

// CodeAlphabet is the alphabet of blind codes (step 6).
const CodeAlphabet = "ACDEFHJKMNPRTUVWXY3479"

// CodeLength is the number of characters of a blind code.
const CodeLength = 3

// Assign lays out the plan with its seed. The plan must be valid; its
// Generator must be empty or Generator, and is set to Generator.
func Assign(p design.Plan) (design.Layout, error) {
	if p.Generator == "" {
		p.Generator = Generator
	}
	if p.Generator != Generator {
		return design.Layout{}, fmt.Errorf("plan asks for generator %q; this version of allot implements %q", p.Generator, Generator)
	}
	if err := p.Validate(); err != nil {
		return design.Layout{}, err
	}
	nt := len(p.Reps)
	sizes := p.BlockSizes()
	byBlock := make([][]design.UnitSpec, p.Blocks+1)
	for _, u := range p.Units {
		byBlock[u.Block] = append(byBlock[u.Block], u)
	}
	units := make([]design.Unit, 0, p.NumUnits())
	for b := 1; b <= p.Blocks; b++ {
		size := sizes[b-1]
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
		for k, t := range slots {
			u := design.Unit{Block: b, Position: k + 1, Treatment: t}
			if p.Units != nil {
				u.ID = byBlock[b][k].ID
			} else {
				u.ID = design.UnitID(b, k+1, size)
			}
			if p.Grid != nil {
				u.Row, u.Col = p.Grid.Place(k + 1)
			}
			if order != nil {
				u.Order = order[k]
			}
			units = append(units, u)
		}
	}
	l := design.Layout{Plan: p, Units: units}
	if p.Blind {
		l.Codes = Codes(p.Seed, nt)
	}
	if err := l.Check(); err != nil {
		panic("randomize: layout breaks its invariants: " + err.Error())
	}
	return l, nil
}

// Codes returns n distinct blind codes from seed (step 6).
func Codes(seed uint64, n int) []string {
	src := Stream(seed, codeStream)
	seen := map[string]bool{}
	out := make([]string, 0, n)
	for len(out) < n {
		b := make([]byte, CodeLength)
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

// Difference is a unit whose recorded assignment differs from the one the
// plan and seed give.
type Difference struct {
	Unit     string
	Recorded string // "block 2, position 3, treatment B" (or "missing")
	Derived  string
}

// Verify re-derives the layout from l's plan and seed and returns every
// unit that differs (nil when the layout matches).
func Verify(l design.Layout) ([]Difference, error) {
	d, err := Assign(l.Plan)
	if err != nil {
		return nil, err
	}
	describe := func(lay design.Layout, u design.Unit) string {
		s := fmt.Sprintf("block %d, position %d, treatment %s", u.Block, u.Position, lay.Plan.Treatments()[u.Treatment].Name)
		if u.Order > 0 {
			s += fmt.Sprintf(", order %d", u.Order)
		}
		if lay.Plan.Blind {
			s += ", code " + lay.Label(u)
		}
		return s
	}
	rec := map[string]design.Unit{}
	for _, u := range l.Units {
		rec[u.ID] = u
	}
	var diffs []Difference
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
	for id := range rec {
		diffs = append(diffs, Difference{Unit: id, Recorded: describe(l, rec[id]), Derived: "not in the plan"})
	}
	return diffs, nil
}
