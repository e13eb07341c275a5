package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
)

// GLMSize is a sample-size answer for a count or proportion response.
type GLMSize struct {
	Plan    power.GLMPlan
	Result  power.GLMResult
	Mode    string // "sample size" or "power"
	Target  float64
	Dropout float64
	// NDropout is the units per group to enrol with the attrition allowance.
	NDropout int
	Study    Study
	// Levels names the groups ("a,b,c"), or empty for 1..k.
	Levels  string
	Command string
	Version string
}

func (s GLMSize) names() []string {
	if s.Levels != "" {
		var out []string
		for _, l := range strings.Split(s.Levels, ",") {
			out = append(out, strings.TrimSpace(l))
		}
		if len(out) == len(s.Plan.Means) {
			return out
		}
	}
	out := make([]string, len(s.Plan.Means))
	for i := range out {
		out[i] = fmt.Sprintf("group %d", i+1)
	}
	return out
}

func (s GLMSize) subject() (one, many string) {
	switch s.Study.Subjects {
	case "animals":
		return "animal", "animals"
	case "plants":
		return "plant", "plants"
	}
	return "unit", "units"
}

func (s GLMSize) responseText() string {
	names := s.names()
	var parts []string
	for i, m := range s.Plan.Means {
		parts = append(parts, fmt.Sprintf("%s %s", names[i], short(m)))
	}
	if s.Plan.Family == power.FamilyBinomial {
		return fmt.Sprintf("proportions %s, each %s counted out of %d", strings.Join(parts, ", "), s.unitWord(), s.Plan.Trials)
	}
	return fmt.Sprintf("mean counts per %s %s", s.unitWord(), strings.Join(parts, ", "))
}

func (s GLMSize) unitWord() string {
	one, _ := s.subject()
	return one
}

func (s GLMSize) method() string {
	if s.Result.Method == power.GLMExact {
		return "exact: the rejection probability summed over every outcome of the group totals"
	}
	return "the noncentral chi-squared approximation of the likelihood-ratio test (exemplary data); exact enumeration would take too many outcomes"
}

func (s GLMSize) cautions() []string {
	model := "binomial"
	if s.Plan.Family == power.FamilyPoisson {
		model = "Poisson"
	}
	return []string{
		fmt.Sprintf("The calculation assumes that the %s vary only as the %s model allows. Real pots, cages and animals usually vary more (overdispersion). allot analyze uses the quasi-likelihood F test whenever the Pearson dispersion exceeds 1, which costs power even without real overdispersion (in a simulation of two proportions at n 5: 0.54 for the chi-squared test, 0.40 as analysed): plan with more units than this, and use a pilot to judge the dispersion.", s.unitWordMany(), model),
		"A power calculation supports, but does not replace, review of the study by the ethics committee or other body that approves the work (for work on animals, the animal-ethics committee), the institution's rules and a qualified statistician.",
	}
}

func (s GLMSize) unitWordMany() string {
	_, many := s.subject()
	return many
}

// GLMSizeText renders the answer, leading with it in words.
func GLMSizeText(s GLMSize) string {
	r := s.Result
	_, many := s.subject()
	var b strings.Builder
	family := "proportions"
	if s.Plan.Family == power.FamilyPoisson {
		family = "counts"
	}
	var lead strings.Builder
	if s.Mode == "power" {
		fmt.Fprintf(&lead, "With %d %s per group (%d in total) the likelihood-ratio test of the %s has power %s.", r.N, many, r.Total, family, fixed(r.Power, 3))
	} else {
		fmt.Fprintf(&lead, "You need %d %s per group, %d in total", r.N, many, r.Total)
		if s.NDropout > 0 {
			fmt.Fprintf(&lead, " (%d per group, %d in total, allowing %s%% losses)", s.NDropout, s.NDropout*len(s.Plan.Means), short(100*s.Dropout))
		}
		fmt.Fprintf(&lead, ", for power %s (%s reached).", fixed(s.Target, 2), fixed(r.Power, 3))
	}
	b.WriteString(wrap(lead.String(), DefaultWidth, ""))
	b.WriteString("\nWhat this assumes\n")
	rows := [][2]string{
		{"response", s.responseText()},
		{"test", fmt.Sprintf("likelihood-ratio (deviance) test of the group term of the %s GLM, as allot analyze fits it; alpha %s", s.Plan.Family, short(s.Plan.Alpha))},
		{"layout", fmt.Sprintf("completely randomised, %d groups of equal size", len(s.Plan.Means))},
	}
	for _, row := range rows {
		b.WriteString(wrap(fmt.Sprintf("%-9s %s", row[0], row[1]), DefaultWidth-2, "  "))
	}
	b.WriteString("\nHow it was computed\n")
	b.WriteString(wrap(fmt.Sprintf("%s; df %d, critical χ² %s, noncentrality of the expected data %s.", s.method(), r.DF, num(r.Crit, 5), num(r.Lambda, 5)), DefaultWidth-2, "  "))
	b.WriteString("\nCautions\n")
	for _, c := range s.cautions() {
		b.WriteString(wrap("- "+c, DefaultWidth-2, "  "))
	}
	return b.String()
}

// GLMSizeJSON writes the answer as an allot.size/v1 document.
func GLMSizeJSON(w io.Writer, s GLMSize) error {
	sizes := make([]int, len(s.Plan.Means))
	for i := range sizes {
		sizes[i] = s.Result.N
	}
	doc := struct {
		Format   string          `json:"format"`
		Method   string          `json:"method"`
		Design   string          `json:"design"`
		Test     string          `json:"test"`
		Mode     string          `json:"mode"`
		N        int             `json:"n_per_group"`
		Sizes    []int           `json:"group_sizes"`
		Total    int             `json:"total_n"`
		DF1      int             `json:"df1"`
		Power    float64         `json:"achieved_power"`
		Family   string          `json:"family"`
		Means    []float64       `json:"means"`
		Groups   []string        `json:"groups"`
		Trials   int             `json:"trials,omitempty"`
		Alpha    float64         `json:"alpha"`
		Target   float64         `json:"target_power"`
		Result   power.GLMResult `json:"result"`
		Dropout  float64         `json:"dropout"`
		NDropout int             `json:"n_with_dropout,omitempty"`
		Cautions []string        `json:"cautions"`
		Command  string          `json:"command"`
		Version  string          `json:"allot_version"`
	}{"allot.size/v1", s.Result.Method, fmt.Sprintf("completely randomised, %d groups", len(s.Plan.Means)),
		fmt.Sprintf("likelihood-ratio test of group (%s GLM)", s.Plan.Family), s.Mode, s.Result.N, sizes, s.Result.Total, s.Result.DF, s.Result.Power, s.Plan.Family, s.Plan.Means, s.names(), s.Plan.Trials, s.Plan.Alpha, s.Target, s.Result,
		s.Dropout, s.NDropout, s.cautions(), s.Command, s.Version}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}

// GLMSimulation is simulated power of the GLM analysis of a count or
// proportion response.
type GLMSimulation struct {
	Plan           power.GLMPlan
	Design         string
	Result         sim.Result
	Overdispersion float64
	Dropout        float64
	Seed           uint64
	Command        string
	Version        string
}

// GLMSimulationText renders the simulated power.
func GLMSimulationText(s GLMSimulation) string {
	var b strings.Builder
	fmt.Fprintf(&b, "Simulated power: %s GLM, likelihood-ratio tests at alpha %s\n", s.Plan.Family, short(s.Plan.Alpha))
	model := fmt.Sprintf("means %s", joinShort(s.Plan.Means))
	if s.Plan.Family == power.FamilyBinomial {
		model = fmt.Sprintf("proportions %s out of %d per unit", joinShort(s.Plan.Means), s.Plan.Trials)
	}
	if s.Overdispersion > 0 {
		model += fmt.Sprintf(", overdispersion %s", short(s.Overdispersion))
	}
	if s.Dropout > 0 {
		model += fmt.Sprintf(", each unit lost with probability %s", short(s.Dropout))
	}
	rows := [][2]string{{"design", s.Design}, {"model", model},
		{"data sets", fmt.Sprintf("%d simulated (seed %d), each analysed by allot's GLM", s.Result.Sims, s.Seed)}}
	if s.Result.Failed > 0 {
		rows = append(rows, [2]string{"not analysable", fmt.Sprintf("%d data sets (counted as not rejecting)", s.Result.Failed)})
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %-14s %s\n", r[0], r[1])
	}
	tb := table{head: []string{"test", "power", "MC SE", "95% interval"}, right: []bool{false, true, true, false}}
	for _, e := range s.Result.Terms {
		tb.rows = append(tb.rows, []string{e.Name, fixed(e.P, 4), fixed(e.SE, 4), fmt.Sprintf("[%s, %s]", fixed(e.Lower, 3), fixed(e.Upper, 3))})
	}
	b.WriteString("\n" + tb.textWidth("  ", DefaultWidth))
	b.WriteString(wrap("Each term is counted twice: by the likelihood-ratio χ² test, and as allot analyze reports it (\"as analysed\": the quasi-likelihood F test when the Pearson dispersion exceeds 1, which costs power when the units vary little beyond the model). Plan with the second.", DefaultWidth-2, "  "))
	b.WriteString(wrap("A power calculation supports, but does not replace, review of the study by the ethics committee or other body that approves the work, the institution's rules and a qualified statistician.", DefaultWidth-2, "  "))
	return b.String()
}

func joinShort(v []float64) string {
	var parts []string
	for _, x := range v {
		parts = append(parts, short(x))
	}
	return strings.Join(parts, ", ")
}

// GLMSimulationJSON writes the simulation as an allot.simulation/v1 document.
func GLMSimulationJSON(w io.Writer, s GLMSimulation) error {
	doc := struct {
		Format         string     `json:"format"`
		Family         string     `json:"family"`
		Means          []float64  `json:"means"`
		Trials         int        `json:"trials,omitempty"`
		Design         string     `json:"design"`
		Overdispersion float64    `json:"overdispersion"`
		Dropout        float64    `json:"dropout"`
		Alpha          float64    `json:"alpha"`
		Seed           string     `json:"seed"`
		Result         sim.Result `json:"result"`
		Command        string     `json:"command"`
		Version        string     `json:"allot_version"`
	}{"allot.simulation/v1", s.Plan.Family, s.Plan.Means, s.Plan.Trials, s.Design, s.Overdispersion, s.Dropout, s.Plan.Alpha,
		fmt.Sprint(s.Seed), s.Result, s.Command, s.Version}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}

// LatinSize is the power of a series of Latin squares.
type LatinSize struct {
	Plan     power.LatinPlan
	Test     power.LatinTest
	Target   float64
	Evaluate bool
	Command  string
}

// LatinSizeText renders the answer, leading with it in words.
func LatinSizeText(s LatinSize) string {
	var b strings.Builder
	t := len(s.Plan.Means)
	r := s.Test
	if s.Evaluate {
		b.WriteString(wrap(fmt.Sprintf("With %d %d × %d Latin square(s) (%d units) the F test of the treatments has power %s.", r.Squares, t, t, r.Units, fixed(r.Power, 3)), DefaultWidth, ""))
	} else {
		b.WriteString(wrap(fmt.Sprintf("You need %d %d × %d Latin square(s), %d units in total, for power %s (%s reached).", r.Squares, t, t, r.Units, fixed(s.Target, 2), fixed(r.Power, 3)), DefaultWidth, ""))
	}
	b.WriteString("\nWhat this assumes\n")
	b.WriteString(wrap(fmt.Sprintf("treatment means %s with residual SD %s (within rows and columns); rows and columns are blocking directions within each square; alpha %s.", joinShort(s.Plan.Means), short(s.Plan.SD), short(s.Plan.Alpha)), DefaultWidth-2, "  "))
	b.WriteString("\nHow it was computed\n")
	b.WriteString(wrap(fmt.Sprintf("exact noncentral F of the treatment test of the additive model (squares, rows and columns within squares, treatments): df %s and %s, noncentrality %s, critical F %s.", dfNum(r.DF1), dfNum(r.DF2), num(r.Lambda, 5), num(r.FCrit, 5)), DefaultWidth-2, "  "))
	b.WriteString("\nCautions\n")
	b.WriteString(wrap("- A power calculation supports, but does not replace, review of the study by the ethics committee or other body that approves the work, the institution's rules and a qualified statistician.", DefaultWidth-2, "  "))
	return b.String()
}

// LatinSizeJSON writes the answer as an allot.size/v1 document.
func LatinSizeJSON(w io.Writer, s LatinSize) error {
	t := len(s.Plan.Means)
	doc := struct {
		Format  string          `json:"format"`
		Method  string          `json:"method"`
		Design  string          `json:"design"`
		Test    string          `json:"test"`
		Mode    string          `json:"mode"`
		Alpha   float64         `json:"alpha"`
		Target  float64         `json:"target_power"`
		N       int             `json:"n_per_group"`
		Total   int             `json:"total_n"`
		DF1     float64         `json:"df1"`
		DF2     float64         `json:"df2"`
		Power   float64         `json:"achieved_power"`
		Squares power.LatinTest `json:"latin"`
		Command string          `json:"command"`
	}{"allot.size/v1", "exact noncentral F", fmt.Sprintf("latin squares, %d treatments", t), "F test of the treatments",
		map[bool]string{true: "power", false: "sample size"}[s.Evaluate], s.Plan.Alpha, s.Target, s.Test.Squares * t, s.Test.Units,
		s.Test.DF1, s.Test.DF2, s.Test.Power, s.Test, s.Command}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}
