package design

import (
	"encoding/json"
	"fmt"
	"strconv"
)

// Unit is one experimental unit: the thing a treatment is applied to and a
// response measured on (a pot, a plot, an animal, a cage).
type Unit struct {
	ID        string `json:"id"`
	Block     int    `json:"block"`     // 1-based
	Position  int    `json:"position"`  // 1-based within the block
	Treatment int    `json:"treatment"` // index into Plan.Treatments; −1 in a sealed layout
	// Row and Col place the unit on the plan's grid (0 without a grid).
	Row int `json:"row,omitempty"`
	Col int `json:"col,omitempty"`
	// Order is the unit's rank in the block's measurement order (0 when no
	// order was planned).
	Order int `json:"order,omitempty"`
	// Code is the unit's blind code (blind plans with a BlindMode).
	Code string `json:"code,omitempty"`
	// MainPlot is the number of the unit's main plot in a split plot
	// (1, 2, … across all blocks; 0 in other designs).
	MainPlot int `json:"main_plot,omitempty"`
}

// Spare is a unit of a unit list that the plan does not use (PerBlock):
// it receives no treatment and is not measured.
type Spare struct {
	ID    string `json:"id"`
	Block int    `json:"block"`
}

// Layout is a plan with a treatment assigned to each unit, units ordered by
// block and position.
type Layout struct {
	Plan  Plan   `json:"plan"`
	Units []Unit `json:"units"`
	// Codes holds the blind code of each treatment (Plan.Blind with one
	// code per treatment; only in the key and in unblinded layouts).
	Codes []string `json:"codes,omitempty"`
	// Spares lists the units of the list left out by PerBlock.
	Spares []Spare `json:"spares,omitempty"`
	// Secret is the blind codes' secret (Plan.Blind with a BlindMode),
	// never written with the layout: only the key file holds it.
	Secret []byte `json:"-"`
}

// Label returns what a person handling unit u sees as its treatment: the
// blind code, or the treatment name.
func (l Layout) Label(u Unit) string {
	if u.Code != "" {
		return u.Code
	}
	if l.Plan.Blind {
		if u.Treatment >= 0 && u.Treatment < len(l.Codes) {
			return l.Codes[u.Treatment]
		}
		return "?"
	}
	return l.Plan.Treatments()[u.Treatment].Name
}

// IsSealed reports whether l is the sealed form of a blind layout: no seed,
// no treatments, only codes.
func (l Layout) IsSealed() bool {
	if !l.Plan.Blind || len(l.Units) == 0 {
		return false
	}
	return l.Units[0].Treatment < 0
}

// Sealed returns what may be shown to people who must stay blind: the plan
// without its seed, and each unit with its code instead of its treatment.
// A layout that is not blind is returned as it is.
func (l Layout) Sealed() Layout {
	if !l.Plan.Blind || l.IsSealed() {
		return l
	}
	s := Layout{Plan: l.Plan.Sealed(), Spares: l.Spares, Units: make([]Unit, len(l.Units))}
	for i, u := range l.Units {
		u.Code = l.Label(u)
		u.Treatment = -1
		s.Units[i] = u
	}
	return s
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
// planned in each block, the blind codes distinct. A sealed layout is
// checked without its treatments.
func (l Layout) Check() error {
	p := l.Plan
	if len(l.Units) != p.NumUnits() {
		return fmt.Errorf("layout has %d units, plan has %d", len(l.Units), p.NumUnits())
	}
	sealed := l.IsSealed()
	sizes := p.BlockSizes()
	ids := make(map[string]bool, len(l.Units))
	nt := len(p.Reps)
	count := make([]int, p.Blocks*nt)
	pos := make(map[[2]int]bool, len(l.Units))
	for _, u := range l.Units {
		if ids[u.ID] {
			return fmt.Errorf("unit %s appears twice", u.ID)
		}
		ids[u.ID] = true
		badT := u.Treatment < 0 || u.Treatment >= nt
		if sealed {
			badT = u.Treatment != -1 || u.Code == ""
		}
		if u.Block < 1 || u.Block > p.Blocks || u.Position < 1 || u.Position > sizes[u.Block-1] || badT {
			return fmt.Errorf("unit %s: block %d, position %d or treatment %d out of range", u.ID, u.Block, u.Position, u.Treatment)
		}
		if pos[[2]int{u.Block, u.Position}] {
			return fmt.Errorf("block %d position %d holds two units", u.Block, u.Position)
		}
		pos[[2]int{u.Block, u.Position}] = true
		if !sealed {
			count[(u.Block-1)*nt+u.Treatment]++
		}
	}
	for _, s := range l.Spares {
		if ids[s.ID] {
			return fmt.Errorf("spare unit %s is also laid out (or spare twice)", s.ID)
		}
		ids[s.ID] = true
	}
	if !sealed {
		for b := 1; b <= p.Blocks; b++ {
			for t := range p.Reps {
				lo, hi := p.replication(sizes[b-1], t)
				if c := count[(b-1)*nt+t]; c < lo || c > hi {
					return fmt.Errorf("block %d has treatment %d %d times, plan says %d to %d", b, t, c, lo, hi)
				}
			}
		}
		if err := l.checkStrata(); err != nil {
			return err
		}
	}
	return l.checkCodes()
}

// checkCodes checks the blind codes: one per treatment (legacy plans and
// BlindTreatment, the same code on every unit of a treatment) or one per
// unit (BlindUnit), all distinct.
func (l Layout) checkCodes() error {
	p := l.Plan
	if !p.Blind {
		return nil
	}
	nt := len(p.Reps)
	switch {
	case p.BlindMode == "" && !l.IsSealed():
		if len(l.Codes) != nt {
			return fmt.Errorf("blind layout has %d codes for %d treatments", len(l.Codes), nt)
		}
	case p.BlindMode == BlindUnit:
		seen := make(map[string]bool, len(l.Units))
		for _, u := range l.Units {
			if u.Code == "" || seen[u.Code] {
				return fmt.Errorf("unit %s: blind code %q missing or repeated", u.ID, u.Code)
			}
			seen[u.Code] = true
		}
	case p.BlindMode == BlindTreatment:
		byCode := map[string]int{}
		for _, u := range l.Units {
			if u.Code == "" {
				return fmt.Errorf("unit %s has no blind code", u.ID)
			}
			if t, ok := byCode[u.Code]; ok && t != u.Treatment {
				return fmt.Errorf("blind code %s stands for two treatments", u.Code)
			}
			byCode[u.Code] = u.Treatment
		}
		if !l.IsSealed() && len(l.Codes) != nt {
			return fmt.Errorf("blind layout has %d codes for %d treatments", len(l.Codes), nt)
		}
	}
	return nil
}

// Counts returns the treatments × blocks table of unit counts (an unblinded
// layout only).
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
	return p.replication(p.BlockSizes()[b-1], t)
}

func (p Plan) replication(size, t int) (lo, hi int) {
	if p.Units == nil || p.Design == CRD {
		return p.Reps[t], p.Reps[t]
	}
	nt := len(p.Reps)
	lo = size / nt
	if size%nt != 0 {
		return lo, lo + 1
	}
	return lo, lo
}

// LayoutFormat identifies layout JSON files.
const LayoutFormat = "allot.layout/v1"

// LayoutDoc is the JSON form of a layout file (allot layout -o FILE.json):
// its format, the plan's fingerprint and the layout. Blind layouts are
// written sealed.
type LayoutDoc struct {
	Format      string `json:"format"`
	Fingerprint string `json:"fingerprint"`
	Layout
}

// DecodeLayout decodes a layout file and checks its format, its plan and
// the plan's fingerprint, but not the assignment (allot layout verify
// reports a moved unit instead of refusing the file).
func DecodeLayout(b []byte) (Layout, error) {
	var doc LayoutDoc
	if err := json.Unmarshal(b, &doc); err != nil {
		return Layout{}, fmt.Errorf("not a layout JSON file: %w", err)
	}
	if doc.Format != "" && doc.Format != LayoutFormat {
		return Layout{}, fmt.Errorf("format %q: this version of allot reads %q", doc.Format, LayoutFormat)
	}
	if err := doc.Plan.Validate(); err != nil {
		return Layout{}, fmt.Errorf("the recorded plan is not valid: %w", err)
	}
	if doc.Fingerprint != doc.Plan.Fingerprint() {
		return Layout{}, fmt.Errorf("the plan does not match its fingerprint %.12s…: the file was edited", doc.Fingerprint)
	}
	return doc.Layout, nil
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
