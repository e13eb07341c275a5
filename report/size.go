package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/power"
)

// SizeFormat names the JSON document of a planning answer.
const SizeFormat = "allot.size/v1"

// Study says what a planning answer is about, in the words the
// justification uses: what is measured and in what unit, where the SD
// comes from, what a unit and a block are, and why the effect matters.
type Study struct {
	Response     string `json:"response,omitempty"`
	Unit         string `json:"unit,omitempty"`
	SDSource     string `json:"sd_source,omitempty"`
	Subjects     string `json:"subjects"` // animals, plants or units
	BlockName    string `json:"block_name,omitempty"`
	EffectReason string `json:"effect_reason,omitempty"`
}

// Allocation is the randomisation and blinding plan of an attached layout.
type Allocation struct {
	Design      string `json:"design"`
	Units       int    `json:"units"`
	Blocks      int    `json:"blocks"`
	BlockName   string `json:"block_name"`
	Seed        uint64 `json:"seed"`
	Generator   string `json:"generator"`
	Fingerprint string `json:"fingerprint"`
	Blind       bool   `json:"blind"`
	Order       bool   `json:"measurement_order"`
}

// AllocationOf summarises a layout for the justification.
func AllocationOf(l design.Layout) *Allocation {
	p := l.Plan
	return &Allocation{Design: string(p.Design), Units: len(l.Units), Blocks: p.Blocks, BlockName: p.BlockName, Seed: p.Seed,
		Generator: p.Generator, Fingerprint: p.Fingerprint(), Blind: p.Blind, Order: p.Order}
}

// Size is a planning answer with the command that produced it.
type Size struct {
	power.Answer
	Study
	Command string `json:"command"`
	Version string `json:"allot_version"`
	// Allocation is the attached layout's plan, if any.
	Allocation *Allocation `json:"allocation,omitempty"`
}

// Caution is printed with every justification and size summary of a
// study on animals.
const Caution = "A power calculation supports, but does not replace, review of the study by the animal-ethics committee (or the body that approves the work), the institution's rules and a qualified statistician. The numbers hold only if the assumed effect and SD are realistic; if they are optimistic the study will be underpowered, which wastes animals and resources as surely as an oversized one."

// Cautions returns the cautions that fit the subjects of a study:
// animals (the default), plants, or generic units.
func Cautions(subjects string) []string {
	switch subjects {
	case "plants":
		return []string{
			"A power calculation supports, but does not replace, review of the plan by a qualified statistician and the rules of the station or institution where the work is done.",
			"The numbers hold only if the assumed effect and SD are realistic; an SD from another season, site or cultivar may not carry over, and if it is optimistic the trial will be underpowered and its space and season wasted.",
			"Benches, positions and seasons differ: block on the gradients you know (light, temperature, watering) and randomise within blocks. Plants lost to pests, disease or handling are rarely lost at random; record the cause of every loss.",
		}
	case "units", "":
		return []string{
			"A power calculation supports, but does not replace, review of the study by the ethics committee or other body that approves the work (for work on animals, the animal-ethics committee), the institution's rules and a qualified statistician.",
			"The numbers hold only if the assumed effect and SD are realistic; if they are optimistic the study will be underpowered and its resources wasted as surely as by an oversized one.",
			"Units lost during the study are rarely lost at random; record the cause of every loss.",
		}
	}
	return []string{
		"The animal-ethics committee (or the body that licenses the work) decides whether the study may proceed and with how many animals; this calculation supports, and does not replace, its review, the institution's rules and the advice of a qualified statistician.",
		"The 3Rs: consider whether the question can be answered without animals (replacement), with fewer (reduction: this calculation is one part of that), and with the least suffering (refinement).",
		"Humane endpoints are to be defined before the study starts, with how animals removed at them are counted in the analysis; losses beyond the attrition allowance leave the study underpowered.",
		"The numbers hold only if the assumed effect and SD are realistic; if they are optimistic the study will be underpowered, which wastes animals as surely as an oversized one.",
	}
}

func (s Size) subjects() string {
	if s.Subjects == "" {
		return "units"
	}
	return s.Subjects
}

func (s Size) blockWord() string {
	if s.BlockName != "" {
		return s.BlockName
	}
	return "block"
}

// nUnit is the answer's n unit in the study's words: "animals per group",
// "litters".
func (s Size) nUnit() string {
	if s.Blocked && s.NUnit == "blocks" {
		return pluralWord(s.blockWord())
	}
	return strings.Replace(s.NUnit, "units", s.subjects(), 1)
}

func pluralWord(w string) string {
	switch {
	case strings.HasSuffix(w, "s"), strings.HasSuffix(w, "x"), strings.HasSuffix(w, "ch"), strings.HasSuffix(w, "sh"):
		return w + "es"
	case strings.HasSuffix(w, "y") && len(w) > 1 && !strings.ContainsAny(w[len(w)-2:len(w)-1], "aeiou"):
		return w[:len(w)-1] + "ies"
	}
	return w + "s"
}

// withUnit writes x in the response's unit.
func (s Size) withUnit(x string) string {
	if s.Unit == "" {
		return x
	}
	return x + " " + s.Unit
}

// errorDFNote is the neutral remark on the error degrees of freedom under a
// power-based answer.
func errorDFNote(e float64) string {
	return fmt.Sprintf("the error variance is estimated on %s degrees of freedom; the power above already accounts for them", short(e))
}

// SizeText writes the readable summary: the answer in words first, then
// what it assumes, how sure it is, and the details of the computation.
func SizeText(w io.Writer, s Size) error {
	var b strings.Builder
	b.WriteString(wrap(s.lead(), 78, ""))
	assumes := [][2]string{
		{"design", s.Design},
		{"test", s.TestName},
	}
	if s.Response != "" {
		resp := s.Response
		if s.Unit != "" {
			resp += " (" + s.Unit + ")"
		}
		assumes = append(assumes, [2]string{"response", resp})
	}
	assumes = append(assumes, [2]string{"effect", s.EffectText})
	if s.SDText != "" {
		sd := s.SDText
		if s.SDSource != "" {
			sd += " (source: " + s.SDSource + ")"
		}
		assumes = append(assumes, [2]string{"SD", sd})
	}
	assumes = append(assumes, [2]string{"alpha", short(s.Alpha) + sidesText(s.Sides)})
	if len(s.GroupSizes) > 0 && !allEqual(s.GroupSizes) {
		assumes = append(assumes, [2]string{"group sizes", joinInts(s.GroupSizes)})
	}
	if s.Dropout > 0 {
		assumes = append(assumes, [2]string{"expected losses", fmt.Sprintf("%s%%: %d %s in total (%d %s)", short(100*s.Dropout), s.TotalDropout, s.subjects(), s.NDropout, s.nUnit())})
	}
	sure := [][2]string{}
	if s.Mode != "power" {
		sure = append(sure, [2]string{"target power", fixed(s.Target, 2)})
	}
	sure = append(sure, [2]string{"power reached", fixed(s.Power, 4)}, [2]string{"chance of missing an effect this large", fixed(1-s.Power, 4)})
	if s.Mode == "detectable effect" {
		sure = append(sure, [2]string{"smallest detectable effect", effectName(s) + " = " + num(s.Detectable, 4)})
		if s.DiffDetectable > 0 {
			what := " (response units, between the two means)"
			if s.Adjustment != "" {
				what = " (response units, for each planned comparison)"
			}
			if s.CritName != "critical t" {
				what = " (response units, between the most different means; least favourable spread)"
			}
			if s.Unit != "" {
				what = strings.Replace(what, "response units", s.Unit, 1)
			}
			sure = append(sure, [2]string{"smallest detectable difference", num(s.DiffDetectable, 4) + what})
		}
	}
	details := [][2]string{
		{"computed with", s.Method},
		{s.nUnit(), fmt.Sprint(s.N)},
		{"total " + s.subjects(), fmt.Sprint(s.Total)},
		{"df", dfText(s)},
		{"noncentrality", num(s.Lambda, 5)},
		{s.CritName, num(s.Crit, 5)},
	}
	for _, sec := range []struct {
		title string
		rows  [][2]string
	}{{"What this assumes", assumes}, {"How sure", sure}, {"Details", details}} {
		b.WriteString("\n" + sec.title + "\n")
		width := 0
		for _, r := range sec.rows {
			width = max(width, runeLen(r[0]))
		}
		for _, r := range sec.rows {
			fmt.Fprintf(&b, "  %s%s  %s\n", r[0], strings.Repeat(" ", width-runeLen(r[0])), r[1])
		}
	}
	b.WriteString("\n")
	for _, wn := range s.Warnings {
		b.WriteString(wrap("Warning: "+wn, 78, "  "))
	}
	if s.ErrorDF > 0 {
		b.WriteString(wrap("Error df: "+errorDFNote(s.ErrorDF)+".", 78, "  "))
	}
	for _, n := range s.Notes {
		b.WriteString(wrap("Note: "+n, 78, "  "))
	}
	b.WriteString(wrap("Caution: "+Cautions(s.Subjects)[0], 78, "  "))
	_, err := io.WriteString(w, b.String())
	return err
}

// lead is the answer in one sentence, in the study's words: "You need 12
// animals per group, 48 in total (60 allowing 15% losses)."
func (s Size) lead() string {
	var b strings.Builder
	total := fmt.Sprintf("%d %s in total", s.Total, s.subjects())
	switch s.Mode {
	case "power":
		fmt.Fprintf(&b, "With %d %s, %s, the power is %s", s.N, s.nUnit(), total, fixed(s.Power, 3))
	case "detectable effect":
		fmt.Fprintf(&b, "With %d %s, %s, the smallest effect detected with power %s is %s = %s", s.N, s.nUnit(), total, fixed(s.Target, 2), effectName(s), num(s.Detectable, 4))
		if s.DiffDetectable > 0 {
			fmt.Fprintf(&b, " (a difference of %s)", s.withUnit(num(s.DiffDetectable, 4)))
		}
	default:
		fmt.Fprintf(&b, "You need %d %s, %s", s.N, s.nUnit(), total)
		if s.Dropout > 0 {
			fmt.Fprintf(&b, " (%d allowing %s%% losses)", s.TotalDropout, short(100*s.Dropout))
		}
		fmt.Fprintf(&b, ", for power %s (%s reached)", fixed(s.Target, 2), fixed(s.Power, 3))
	}
	return b.String() + "."
}

func effectName(s Size) string {
	if s.CritName == "critical t" {
		return "d"
	}
	return "f"
}

func dfText(s Size) string {
	if s.CritName == "critical t" {
		return short(s.DF2)
	}
	return short(s.DF1) + ", " + short(s.DF2)
}

func sidesText(sides int) string {
	switch sides {
	case 1:
		return ", one-sided"
	case 2:
		return ", two-sided"
	}
	return ""
}

func allEqual(v []int) bool {
	for _, x := range v {
		if x != v[0] {
			return false
		}
	}
	return true
}

func joinInts(v []int) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = fmt.Sprint(x)
	}
	return strings.Join(s, ", ")
}

// effectPhrase says what is to be detected, in the study's words.
func (s Size) effectPhrase() string {
	k := len(s.GroupNames)
	between := "between any two of the " + fmt.Sprint(k) + " group means (planned for the least favourable arrangement of the other means)"
	if k == 2 {
		between = "between the two means"
	}
	switch s.Adjustment {
	case "bonferroni", "dunnett":
		if s.Control != "" {
			between = "between each treatment and the control (" + s.Control + ")"
		} else {
			between = "between any two groups"
		}
	case "tukey":
		between = "between any two groups"
	}
	switch s.EffectKind {
	case "diff":
		return fmt.Sprintf("a difference of %s %s", s.withUnit(short(s.Diff)), between)
	case "means":
		var parts []string
		for i, m := range s.Means {
			name := fmt.Sprint(i + 1)
			if i < len(s.GroupNames) {
				name = s.GroupNames[i]
			}
			parts = append(parts, name+": "+s.withUnit(short(m)))
		}
		what := "the expected means"
		if s.Response != "" {
			what += " of " + s.Response
		}
		return what + " (" + strings.Join(parts, ", ") + ")"
	case "d":
		return fmt.Sprintf("a standardised difference of d = %s (the difference between the means over the SD)", num(s.D, 3))
	case "eta2", "f":
		return "an effect of " + s.EffectText
	}
	return s.EffectText
}

func (s Size) sdPhrase() string {
	if s.SD == 0 {
		return ""
	}
	sd := strconv.FormatFloat(s.SD, 'g', 4, 64)
	p := " with an SD of " + s.withUnit(sd)
	var basis []string
	rest := strings.TrimLeft(strings.TrimPrefix(s.SDText, sd), ", ")
	if strings.HasPrefix(rest, "(") && strings.HasSuffix(rest, ")") {
		rest = rest[1 : len(rest)-1]
	}
	if rest != "" {
		basis = append(basis, rest)
	}
	if s.SDSource != "" {
		basis = append(basis, s.SDSource)
	}
	if len(basis) > 0 {
		p += " (" + strings.Join(basis, "; ") + ")"
	}
	return p
}

// Justification returns the paragraph for an ethics or grant application,
// followed by the cautions that fit the subjects, as plain sentences.
func Justification(s Size) string {
	var b strings.Builder
	subj := s.subjects()
	per := s.nUnit()
	total := fmt.Sprintf("%d %s in total", s.Total, subj)
	if s.Blocked {
		total = fmt.Sprintf("%d %s in total, one for each treatment in every %s", s.Total, subj, s.blockWord())
	}
	sides := ""
	switch s.Sides {
	case 1:
		if !strings.Contains(s.TestName, "one-sided") {
			sides = ", one-sided"
		}
	case 2:
		sides = ", two-sided"
	}
	fmt.Fprintf(&b, "Sample size. The primary analysis is the %s, at a significance level of %s%s; the design is %s. ", s.TestName, short(s.Alpha), sides, s.Design)
	switch s.Mode {
	case "power":
		fmt.Fprintf(&b, "With %d %s (%s), the test has a power of %s to detect %s%s. ", s.N, per, total, fixed(s.Power, 3), s.effectPhrase(), s.sdPhrase())
	case "detectable effect":
		fmt.Fprintf(&b, "With %d %s (%s), the smallest effect the test detects with a power of %s is %s = %s", s.N, per, total, fixed(s.Target, 2), effectName(s), num(s.Detectable, 3))
		if s.DiffDetectable > 0 {
			fmt.Fprintf(&b, ", a difference of %s", s.withUnit(num(s.DiffDetectable, 3)))
			if s.CritName != "critical t" && len(s.GroupNames) > 2 {
				b.WriteString(" between the most different means")
			}
			b.WriteString(s.sdPhrase())
		}
		b.WriteString(". ")
	default:
		fmt.Fprintf(&b, "To detect %s%s at a power of %s, the test needs %d %s (%s; the power achieved is %s). ", s.effectPhrase(), s.sdPhrase(), fixed(s.Target, 2), s.N, per, total, fixed(s.Power, 3))
	}
	switch {
	case s.EffectKind == "means" && len(s.Factors) > 1:
		term := strings.TrimPrefix(strings.TrimPrefix(strings.TrimSuffix(s.TestName, " interaction"), "F test of the "), "F test of ")
		fmt.Fprintf(&b, "Only the %s component of these cell means enters the test (Cohen's f = %s). ", term, num(s.F, 3))
	case s.EffectKind == "means" && s.CritName != "critical t":
		fmt.Fprintf(&b, "These means correspond to Cohen's f = %s. ", num(s.F, 3))
	}
	if s.EffectReason != "" {
		fmt.Fprintf(&b, "Why this effect matters: %s. ", strings.TrimRight(s.EffectReason, ". "))
	}
	if len(s.GroupSizes) > 0 && !allEqual(s.GroupSizes) {
		var parts []string
		for i, n := range s.GroupSizes {
			if i < len(s.GroupNames) {
				parts = append(parts, fmt.Sprintf("%s %d", s.GroupNames[i], n))
			}
		}
		fmt.Fprintf(&b, "The groups are of unequal size: %s. ", strings.Join(parts, ", "))
	}
	if s.Covariate {
		fmt.Fprintf(&b, "The analysis will adjust for a baseline measurement taken before treatment, assumed to correlate r = %s with the outcome within groups; this reduces the error variance to %s of its value without it and uses one degree of freedom (analysis of covariance; Borm, Fransen and Lemmens 2007). ",
			short(s.CovariateR), num(1-s.CovariateR*s.CovariateR, 3))
	}
	if s.Dropout > 0 {
		fmt.Fprintf(&b, "To allow for an expected loss of %s%% of the %s, %d %s (%d %s in total) will be enrolled. ", short(100*s.Dropout), subj, s.NDropout, per, s.TotalDropout, subj)
	} else {
		fmt.Fprintf(&b, "No attrition allowance is included. ")
	}
	if a := s.Allocation; a != nil {
		within := ""
		if a.Design == "rcbd" {
			within = fmt.Sprintf(" within each of %d %s", a.Blocks, pluralWord(a.BlockName))
		}
		fmt.Fprintf(&b, "The %d %s of the attached layout are allocated to treatments at random%s by allot's seeded algorithm %s (seed %d, plan fingerprint %s), so that the allocation can be re-derived and checked. ", a.Units, subj, within, a.Generator, a.Seed, a.Fingerprint[:12])
		if a.Blind {
			b.WriteString("Those who handle and assess the units see codes instead of treatment names; the unblinding key is kept apart until the analysis. ")
		} else {
			b.WriteString("The layout shows treatment names, so outcome assessment is not blinded. ")
		}
		if a.Order {
			b.WriteString("Measurements are taken in a randomised order within each block. ")
		}
	}
	for _, n := range s.Notes {
		if strings.HasPrefix(n, "Power is that of") {
			b.WriteString(n + " ")
		}
	}
	fmt.Fprintf(&b, "The calculation uses the exact noncentral %s distribution (df %s, noncentrality %s; %s) and was made with allot %s by the command: %s.",
		strings.TrimPrefix(s.CritName, "critical "), dfText(s), num(s.Lambda, 4), errorDFNote(s.ErrorDF), s.Version, s.Command)
	for _, w := range s.Warnings {
		b.WriteString(" Setting to review: " + w)
	}
	for _, c := range Cautions(s.Subjects) {
		b.WriteString("\n\n" + c)
	}
	return b.String()
}

// JustificationText writes the justification folded for a terminal.
func JustificationText(w io.Writer, s Size) error {
	var b strings.Builder
	for _, para := range strings.Split(Justification(s), "\n\n") {
		b.WriteString(wrap(para, 78, ""))
		b.WriteString("\n")
	}
	_, err := io.WriteString(w, strings.TrimRight(b.String(), "\n")+"\n")
	return err
}

// SizePlan is the plan fragment a planning answer hands to
// allot layout --from: the treatments, the replication with the attrition
// allowance, the blocks, and the response, so that the laid-out N is the
// justified N.
type SizePlan struct {
	Design  string       `json:"design"` // crd or rcbd
	Factors []PlanFactor `json:"factors"`
	Control string       `json:"control,omitempty"`
	// Reps holds the units of each treatment (plan order, first factor
	// slowest), per block for rcbd, including the attrition allowance.
	Reps      []int   `json:"reps"`
	Blocks    int     `json:"blocks"`
	BlockName string  `json:"block_name,omitempty"`
	Response  string  `json:"response,omitempty"`
	Unit      string  `json:"unit,omitempty"`
	Dropout   float64 `json:"dropout"`
	// JustifiedUnits is the N the power calculation needs; Units the N to
	// enrol (with the attrition allowance).
	JustifiedUnits int `json:"justified_units"`
	Units          int `json:"units"`
}

// PlanFactor is a factor of a SizePlan with its level names.
type PlanFactor struct {
	Name   string   `json:"name"`
	Levels []string `json:"levels"`
}

// PlanOf returns the plan fragment of a planning answer.
func PlanOf(s Size) SizePlan {
	p := SizePlan{Design: "crd", Control: s.Control, Blocks: 1, BlockName: s.BlockName, Response: s.Response, Unit: s.Unit,
		Dropout: s.Dropout, JustifiedUnits: s.Total, Units: s.TotalDropout}
	for _, f := range s.Factors {
		pf := PlanFactor{Name: f.Name, Levels: f.Names}
		if len(pf.Levels) != f.Levels {
			pf.Levels = nil
			for i := 1; i <= f.Levels; i++ {
				pf.Levels = append(pf.Levels, fmt.Sprint(i))
			}
		}
		p.Factors = append(p.Factors, pf)
	}
	p.Reps = append([]int(nil), s.GroupSizesDropout...)
	if s.Blocked {
		p.Design, p.Blocks = "rcbd", s.NDropout
		for i := range p.Reps {
			p.Reps[i] = 1
		}
	}
	return p
}

// ReadSizePlan reads the plan fragment from a document written by
// allot size -o.
func ReadSizePlan(b []byte) (SizePlan, error) {
	var d struct {
		Format string    `json:"format"`
		Plan   *SizePlan `json:"plan"`
	}
	if err := json.Unmarshal(b, &d); err != nil {
		return SizePlan{}, fmt.Errorf("not a JSON document: %v", err)
	}
	if d.Format != SizeFormat || d.Plan == nil {
		return SizePlan{}, fmt.Errorf("not a size answer (format %q, want %q); write one with allot size ... -o FILE.json", d.Format, SizeFormat)
	}
	if len(d.Plan.Factors) == 0 || len(d.Plan.Reps) == 0 {
		return SizePlan{}, fmt.Errorf("the plan has no treatments")
	}
	return *d.Plan, nil
}

// sizeDoc is the JSON document of a planning answer: the answer, the study,
// and (when asked) the justification, with the cautions that apply.
type sizeDoc struct {
	Format string `json:"format"`
	Size
	Justification string   `json:"justification,omitempty"`
	Cautions      []string `json:"cautions"`
	Plan          SizePlan `json:"plan"`
}

// SizeJSON writes s as one indented JSON object (format allot.size/v1);
// with justify it carries the justification paragraph too.
func SizeJSON(w io.Writer, s Size, justify bool) error {
	d := sizeDoc{Format: SizeFormat, Size: s, Cautions: Cautions(s.Subjects), Plan: PlanOf(s)}
	if justify {
		d.Justification = strings.SplitN(Justification(s), "\n\n", 2)[0]
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(d)
}

// Resource is a resource-equation answer ready to render.
type Resource struct {
	power.ResourceAnswer
	Study
	Command string `json:"command"`
	Version string `json:"allot_version"`
}

// ResourceText writes the resource-equation range with each bound
// explained.
func ResourceText(w io.Writer, r Resource) error {
	var b strings.Builder
	s := Size{Study: r.Study, Answer: power.Answer{NUnit: r.NUnit, Blocked: r.Blocked}}
	per := s.nUnit()
	fmt.Fprintf(&b, "Resource equation: %s\n", r.Design)
	rows := [][2]string{
		{"design", r.Design},
		{"rule", fmt.Sprintf("error df E = N − B − T between %d and %d (Mead 1988; common practice)", power.ResourceLow, power.ResourceHigh)},
		{per, fmt.Sprintf("%d to %d", r.Low, r.High)},
		{"total " + s.subjects(), fmt.Sprintf("%d to %d", r.TotalLow, r.TotalHigh)},
		{"error df", fmt.Sprintf("%s to %s", short(r.LowDF), short(r.HighDF))},
	}
	if r.Low == r.High {
		rows[2][1], rows[3][1], rows[4][1] = fmt.Sprint(r.Low), fmt.Sprint(r.TotalLow), short(r.LowDF)
	}
	width := 0
	for _, row := range rows {
		width = max(width, runeLen(row[0]))
	}
	for _, row := range rows {
		fmt.Fprintf(&b, "  %s%s  %s\n", row[0], strings.Repeat(" ", width-runeLen(row[0])), row[1])
	}
	b.WriteString("\n")
	if r.Note != "" {
		b.WriteString(wrap("Bounds: "+r.Note+".", 78, "  "))
	} else {
		lower := fmt.Sprintf("Lower bound: %d %s give E = %s, the fewest with E ≥ %d", r.Low, per, short(r.LowDF), power.ResourceLow)
		if r.Low > 2 {
			lower += fmt.Sprintf("; with %d the error variance would rest on fewer than %d df and be poorly estimated", r.Low-1, power.ResourceLow)
		}
		b.WriteString(wrap(lower+".", 78, "  "))
		b.WriteString(wrap(fmt.Sprintf("Upper bound: %d %s give E = %s, the most with E ≤ %d; beyond it further units improve the estimate of the error variance little.", r.High, per, short(r.HighDF), power.ResourceHigh), 78, "  "))
	}
	b.WriteString(wrap("Note: the resource equation is a fallback for when no effect size or SD can be given; it says nothing about the power to detect any effect. When an effect and an SD can be stated, size the study by power (allot size without --resource).", 78, "  "))
	b.WriteString(wrap("Caution: "+Cautions(r.Subjects)[0], 78, "  "))
	_, err := io.WriteString(w, b.String())
	return err
}

// ResourceJSON writes the resource-equation answer as JSON (format
// allot.size/v1, mode "resource equation").
func ResourceJSON(w io.Writer, r Resource) error {
	d := struct {
		Format string `json:"format"`
		Mode   string `json:"mode"`
		Resource
		Cautions []string `json:"cautions"`
	}{SizeFormat, "resource equation", r, Cautions(r.Subjects)}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(d)
}
