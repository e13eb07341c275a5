package report

import (
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/power/sim"
)

// SimulationFormat names the JSON document of a simulation.
const SimulationFormat = "allot.simulation/v1"

// Simulation is a Monte-Carlo power result ready to render.
type Simulation struct {
	Design   string `json:"design"`
	Model    string `json:"model"`
	Analysis string `json:"analysis"`
	// PostHocRule says how the planned comparisons were counted.
	PostHocRule string      `json:"posthoc_rule,omitempty"`
	Term        string      `json:"term"`
	N           int         `json:"n_per_group"`
	NUnit       string      `json:"n_unit"`
	Units       int         `json:"total_n"`
	Target      float64     `json:"target_power,omitempty"`
	Result      sim.Result  `json:"result"`
	Tried       []sim.Trial `json:"tried,omitempty"`
	Exact       float64     `json:"exact_power_without_losses,omitempty"`
	Seed        uint64      `json:"seed,string"` // a string: seeds reach 2^64
	Command     string      `json:"command"`
	Version     string      `json:"allot_version"`
}

// SimulationText writes the simulation summary.
func SimulationText(w io.Writer, s Simulation) error {
	var b strings.Builder
	r := s.Result
	fmt.Fprintf(&b, "Simulated power: %s\n", s.Analysis)
	rows := [][2]string{
		{"design", s.Design},
		{"model", s.Model},
		{s.NUnit, fmt.Sprintf("%d (%d units)", s.N, s.Units)},
		{"data sets", fmt.Sprintf("%d simulated (seed %d)", r.Sims, s.Seed)},
	}
	if r.MeanLost > 0 {
		rows = append(rows, [2]string{"losses", fmt.Sprintf("%s units lost per data set on average", num(r.MeanLost, 3))})
	}
	if r.Failed > 0 {
		rows = append(rows, [2]string{"not analysable", fmt.Sprintf("%d data sets (a treatment lost, or a block or the model left with too few units); counted as not rejecting", r.Failed)})
	}
	if s.Exact > 0 {
		rows = append(rows, [2]string{"exact power", fixed(s.Exact, 4) + " (noncentral F, no losses, for comparison)"})
	}
	width := 0
	for _, row := range rows {
		width = max(width, runeLen(row[0]))
	}
	for _, row := range rows {
		fmt.Fprintf(&b, "  %s%s  %s\n", row[0], strings.Repeat(" ", width-runeLen(row[0])), row[1])
	}
	tb := table{head: []string{"test", "power", "MC SE", "95% interval"}, right: []bool{false, true, true, false}}
	add := func(e sim.Estimate, name string) {
		tb.rows = append(tb.rows, []string{name, fixed(e.P, 4), fixed(e.SE, 4), "[" + fixed(e.Lower, 3) + ", " + fixed(e.Upper, 3) + "]"})
	}
	for _, e := range r.Terms {
		name := "F test of " + e.Name
		if e.Name == s.Term {
			name += " (planned)"
		}
		add(e, name)
	}
	if r.AnyPair != nil {
		add(*r.AnyPair, "any planned comparison")
		for _, e := range r.Pairs {
			add(e, "comparison "+e.Name)
		}
	}
	b.WriteString("\n")
	b.WriteString(tb.text("  "))
	if len(s.Tried) > 1 {
		var t []string
		for _, tr := range s.Tried {
			t = append(t, fmt.Sprintf("n=%d: %s", tr.N, fixed(tr.Power, 3)))
		}
		b.WriteString("\n" + wrap(fmt.Sprintf("Search (same random draws for every n): %s. The smallest n reaching %s is %d; with Monte-Carlo error near the boundary, n ± 1 may also qualify.", strings.Join(t, ", "), fixed(s.Target, 2), s.N), 78, "  "))
	}
	if s.PostHocRule != "" {
		b.WriteString("\n" + wrap(s.PostHocRule, 78, "  "))
	}
	if r.Cancelled {
		b.WriteString("\n" + wrap(fmt.Sprintf("Cancelled after %d data sets: these estimates use only those.", r.Sims), 78, "  "))
	}
	b.WriteString("\n" + wrap("Caution: "+Caution, 78, "  "))
	_, err := io.WriteString(w, b.String())
	return err
}

// SimulationJSON writes the simulation as JSON.
func SimulationJSON(w io.Writer, s Simulation) error {
	return writeJSON(w, struct {
		Format string `json:"format"`
		Simulation
	}{SimulationFormat, s})
}
