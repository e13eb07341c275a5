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
}

// Layout is a plan with a treatment assigned to each unit, units ordered by
// block and position.
type Layout struct {
	Plan  Plan   `json:"plan"`
	Units []Unit `json:"units"`
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
	if len(l.Units) != p.Units() {
		return fmt.Errorf("layout has %d units, plan has %d", len(l.Units), p.Units())
	}
	ids := map[string]bool{}
	count := make(map[[2]int]int)
	pos := make(map[[2]int]bool)
	nt := len(p.Reps)
	for _, u := range l.Units {
		if ids[u.ID] {
			return fmt.Errorf("unit %s appears twice", u.ID)
		}
		ids[u.ID] = true
		if u.Block < 1 || u.Block > p.Blocks || u.Position < 1 || u.Position > p.BlockSize() || u.Treatment < 0 || u.Treatment >= nt {
			return fmt.Errorf("unit %s: block %d, position %d or treatment %d out of range", u.ID, u.Block, u.Position, u.Treatment)
		}
		if pos[[2]int{u.Block, u.Position}] {
			return fmt.Errorf("block %d position %d holds two units", u.Block, u.Position)
		}
		pos[[2]int{u.Block, u.Position}] = true
		count[[2]int{u.Block, u.Treatment}]++
	}
	for b := 1; b <= p.Blocks; b++ {
		for t, r := range p.Reps {
			if c := count[[2]int{b, t}]; c != r {
				return fmt.Errorf("block %d has treatment %d %d times, plan says %d", b, t, c, r)
			}
		}
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
