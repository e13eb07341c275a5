package design

import (
	"fmt"
	"strconv"
)

// Unit is one experimental unit: the thing a treatment is applied to and a
// response measured on (a pot, a plot, an animal, a cage).
type Unit struct {
	ID        string `json:"id"`
	Block     int    `json:"block"`     // 1-based
	Position  int    `json:"position"`  // 1-based within the block
	Treatment int    `json:"treatment"` // index into Plan.Treatments
	// Row and Col place the unit on the plan's grid (0 without a grid).
	Row int `json:"row,omitempty"`
	Col int `json:"col,omitempty"`
	// Order is the unit's rank in the block's measurement order (0 when no
	// order was planned).
	Order int `json:"order,omitempty"`
}

// Layout is a plan with a treatment assigned to each unit, units ordered by
// block and position.
type Layout struct {
	Plan  Plan   `json:"plan"`
	Units []Unit `json:"units"`
	// Codes holds the blind code of each treatment (Plan.Blind only).
	Codes []string `json:"codes,omitempty"`
}

// Label returns what a person handling unit u sees as its treatment: the
// blind code, or the treatment name.
func (l Layout) Label(u Unit) string {
	if l.Plan.Blind && len(l.Codes) > u.Treatment {
		return l.Codes[u.Treatment]
	}
	return l.Plan.Treatments()[u.Treatment].Name
}

// IDMultiplier returns the multiplier of the default unit-ID scheme: a unit's
// ID is block × M + position, with M = 100 for blocks of up to 99 units (101,
// 102, … 201, …, the common field and greenhouse convention) and the next
// power of ten above the block size otherwise.
func IDMultiplier(blockSize int) int {
	m := 100
	for m <= blockSize {
		m *= 10
	}
	return m
}

// UnitID returns the default ID of the unit at position pos of block b.
func UnitID(b, pos, blockSize int) string {
	return strconv.Itoa(b*IDMultiplier(blockSize) + pos)
}

// Check verifies the layout's invariants against its plan: every unit once,
// positions 1..block size in every block, each treatment replicated as
// planned in each block.
func (l Layout) Check() error {
	p := l.Plan
	if len(l.Units) != p.NumUnits() {
		return fmt.Errorf("layout has %d units, plan has %d", len(l.Units), p.NumUnits())
	}
	sizes := p.BlockSizes()
	ids := map[string]bool{}
	count := make(map[[2]int]int)
	pos := make(map[[2]int]bool)
	nt := len(p.Reps)
	for _, u := range l.Units {
		if ids[u.ID] {
			return fmt.Errorf("unit %s appears twice", u.ID)
		}
		ids[u.ID] = true
		if u.Block < 1 || u.Block > p.Blocks || u.Position < 1 || u.Position > sizes[u.Block-1] || u.Treatment < 0 || u.Treatment >= nt {
			return fmt.Errorf("unit %s: block %d, position %d or treatment %d out of range", u.ID, u.Block, u.Position, u.Treatment)
		}
		if pos[[2]int{u.Block, u.Position}] {
			return fmt.Errorf("block %d position %d holds two units", u.Block, u.Position)
		}
		pos[[2]int{u.Block, u.Position}] = true
		count[[2]int{u.Block, u.Treatment}]++
	}
	for b := 1; b <= p.Blocks; b++ {
		for t := range p.Reps {
			lo, hi := p.Replication(b, t)
			if c := count[[2]int{b, t}]; c < lo || c > hi {
				return fmt.Errorf("block %d has treatment %d %d times, plan says %d to %d", b, t, c, lo, hi)
			}
		}
	}
	if p.Blind && len(l.Codes) != nt {
		return fmt.Errorf("blind layout has %d codes for %d treatments", len(l.Codes), nt)
	}
	return nil
}

// Counts returns the treatments × blocks table of unit counts.
func (l Layout) Counts() [][]int {
	c := make([][]int, len(l.Plan.Reps))
	for i := range c {
		c[i] = make([]int, l.Plan.Blocks)
	}
	for _, u := range l.Units {
		c[u.Treatment][u.Block-1]++
	}
	return c
}

// Replication returns the least and most units of treatment t in block b:
// Reps[t] for planned blocks; for a block of a unit list of size s with nt
// treatments, ⌊s/nt⌋ or one more (the remainder goes to distinct treatments
// chosen at random).
func (p Plan) Replication(b, t int) (lo, hi int) {
	if p.Units == nil || p.Design == CRD {
		return p.Reps[t], p.Reps[t]
	}
	nt := len(p.Reps)
	s := p.BlockSizes()[b-1]
	lo = s / nt
	if s%nt != 0 {
		return lo, lo + 1
	}
	return lo, lo
}

// ParseLayout decodes a layout file (the JSON of allot layout -o FILE.json:
// the plan, its fingerprint and the units), checking the fingerprint and the
// layout's invariants.
func ParseLayout(b []byte) (Layout, error) {
	l, err := DecodeLayout(b)
	if err != nil {
		return Layout{}, err
	}
	if err := l.Check(); err != nil {
		return Layout{}, fmt.Errorf("the recorded layout is inconsistent: %w", err)
	}
	return l, nil
}
