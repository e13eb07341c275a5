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
//     (PCG XSL RR 128/64, O'Neill 2014; Seed sets both 64-bit state words to
//     z_b).
//  2. Bounded integers. A uniform integer in [0, n) is drawn by rejection:
//     with t = 2^64 mod n, draw 64-bit x until x ≥ t, then return x mod n
//     (no modulo bias).
//  3. Shuffle. The block's treatment list is built in plan order, treatment
//     i repeated Reps[i] times. For i from len−1 down to 1, draw j uniform in
//     [0, i] and swap entries i and j (Fisher and Yates; Durstenfeld 1964,
//     CACM 7(7) 420). Entry k then goes to position k+1 of the block.
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

	"allot/design"

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
	size := p.BlockSize()
	base := make([]int, 0, size)
	for t, r := range p.Reps {
		for k := 0; k < r; k++ {
			base = append(base, t)
		}
	}
	units := make([]design.Unit, 0, p.Units())
	slots := make([]int, size)
	for b := 1; b <= p.Blocks; b++ {
		copy(slots, base)
		Shuffle(Stream(p.Seed, uint64(b)), slots)
		for k, t := range slots {
			units = append(units, design.Unit{
				ID:        design.UnitID(b, k+1, size),
				Block:     b,
				Position:  k + 1,
				Treatment: t,
			})
		}
	}
	l := design.Layout{Plan: p, Units: units}
	if err := l.Check(); err != nil {
		panic("randomize: layout breaks its invariants: " + err.Error())
	}
	return l, nil
}
