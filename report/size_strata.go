package report

import (
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
)

// SplitPlotSize is the power of a balanced split plot at R replicates
// (blocks, or main plots per whole-plot level), solved for one test or
// evaluated at a given R.
type SplitPlotSize struct {
	Plan power.SplitPlotPlan `json:"-"`
	// R is the replication: blocks (Plan.Blocked) or main plots per
	// whole-plot level.
	R int `json:"replicates"`
	// Target and Term are set when R was solved for: the target power of
	// the test Tests[Term].
	Target  float64               `json:"target_power,omitempty"`
	Term    *int                  `json:"solved_for,omitempty"`
	Tests   []power.SplitPlotTest `json:"tests"`
	MainFor string                `json:"main_plot_name,omitempty"`
	// Simulated, when set, is the Monte-Carlo power of the same tests with
	// allot's own analysis (sim.RunSplitPlot), at SimDropout losses and
	// seed SimSeed.
	Simulated  *sim.Result `json:"simulated,omitempty"`
	SimDropout float64     `json:"simulated_dropout,omitempty"`
	SimSeed    uint64      `json:"simulated_seed,omitempty"`
	Command    string      `json:"command,omitempty"`
}

func (s SplitPlotSize) mainWord() string {
	if s.MainFor == "" {
		return "main plot"
	}
	return s.MainFor
}

// SplitPlotSizeText writes the split-plot power summary.
func SplitPlotSizeText(w io.Writer, s SplitPlotSize) error {
	p := s.Plan
	var b strings.Builder
	mp, mps := s.mainWord(), plural2(s.mainWord())
	fmt.Fprintf(&b, "Split-plot power: %s (%d levels, one per %s) and %s (%d levels, within each %s)\n", p.WholeName, p.A, mp, p.SubName, p.B, mp)
	arr := fmt.Sprintf("%d %s per %s level, completely randomised", s.R, mps, p.WholeName)
	if p.Blocked {
		arr = fmt.Sprintf("%d blocks, each with one %s per %s level", s.R, mp, p.WholeName)
	}
	rows := [][2]string{
		{"arrangement", arr},
		{"size", fmt.Sprintf("%d %s, %d sub-plots", p.A*s.R, mps, p.A*p.B*s.R)},
		{"SDs", fmt.Sprintf("between %s %s, between sub-plots within a %s %s", mps, short(p.SDMain), mp, short(p.SDSub))},
		{"alpha", short(p.Alpha)},
	}
	if s.Term != nil {
		t := s.Tests[*s.Term]
		rows = append(rows, [2]string{"answer", fmt.Sprintf("the smallest replication giving the test of %s power %s or more: %d (power %s)", t.Term, short(s.Target), s.R, fixed(t.Power, 3))})
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %-12s %s\n", r[0], r[1])
	}
	tb := table{head: []string{"test", "df", "error df", "noncentrality", "critical F", "power", "F formed with"}, right: []bool{false, true, true, true, true, true, false}}
	for _, t := range s.Tests {
		tb.rows = append(tb.rows, []string{t.Term, short(t.DF1), short(t.DF2), num(t.Lambda, 4), num(t.FCrit, 4), fixed(t.Power, 3), t.ErrorSrc})
	}
	b.WriteString("\n" + tb.text("  "))
	if m := s.Simulated; m != nil {
		fmt.Fprintf(&b, "\nSimulated: %d data sets (seed %d), each analysed as allot analyze would (two-stratum ANOVA; REML mixed model when sub-plots are lost)", m.Sims, s.SimSeed)
		if s.SimDropout > 0 {
			fmt.Fprintf(&b, ", each sub-plot lost with probability %s (%.2f lost per data set on average)", short(s.SimDropout), m.MeanLost)
		}
		b.WriteString("\n")
		st := table{head: []string{"test", "exact power", "simulated", "MC SE", "95% interval"}, right: []bool{false, true, true, true, false}}
		for i, e := range m.Terms {
			st.rows = append(st.rows, []string{s.Tests[i].Term, fixed(s.Tests[i].Power, 3), fixed(e.P, 4), fixed(e.SE, 4), fmt.Sprintf("[%s, %s]", fixed(e.Lower, 3), fixed(e.Upper, 3))})
		}
		b.WriteString(st.text("  "))
		if m.Failed > 0 {
			fmt.Fprintf(&b, "  %d data set(s) could not be analysed; counted as not rejecting.\n", m.Failed)
		}
		if m.Cancelled {
			b.WriteString("  Stopped early: the estimates use the data sets done.\n")
		}
	}
	b.WriteString(wrap(fmt.Sprintf("Exact noncentral F for each test of the balanced two-stratum analysis, from the expected mean squares (Cochran and Cox 1957, section 7.14): the whole-plot factor is tested against the variation between %s, so its power depends on the number of %s and on the SD between them, not on the number of sub-plots.", mps, mps), 78, "  "))
	b.WriteString(wrap("Caution: "+Caution, 78, "  "))
	_, err := io.WriteString(w, b.String())
	return err
}

// SplitPlotSizeJSON writes the split-plot power as JSON.
func SplitPlotSizeJSON(w io.Writer, s SplitPlotSize) error {
	p := s.Plan
	type plan struct {
		Whole    string    `json:"whole_plot_factor"`
		WholeN   int       `json:"whole_plot_levels"`
		Sub      string    `json:"sub_plot_factor"`
		SubN     int       `json:"sub_plot_levels"`
		Means    []float64 `json:"cell_means"`
		SDMain   float64   `json:"sd_main"`
		SDSub    float64   `json:"sd_sub"`
		InBlocks bool      `json:"in_blocks"`
		Alpha    float64   `json:"alpha"`
	}
	return writeJSON(w, struct {
		Plan plan `json:"plan"`
		SplitPlotSize
		Caution string `json:"caution"`
	}{plan{p.WholeName, p.A, p.SubName, p.B, p.Means, p.SDMain, p.SDSub, p.Blocked, p.Alpha}, s, Caution})
}
