package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/power"
)

// Size is a planning answer with the command that produced it.
type Size struct {
	power.Answer
	Command string `json:"command"`
	Version string `json:"allot_version"`
}

// Caution is printed with every justification and size summary.
const Caution = "A power calculation supports, but does not replace, review of the study by the animal-ethics committee (or the body that approves the work), the institution's rules and a qualified statistician. The numbers hold only if the assumed effect and SD are realistic; if they are optimistic the study will be underpowered, which wastes animals and resources as surely as an oversized one."

// resourceNote returns the resource-equation remark for an error df.
func resourceNote(e float64) string {
	switch {
	case e < 10:
		return fmt.Sprintf("error df %g is below 10: by the resource equation (Mead 1988, The Design of Experiments, common practice) the error estimate is poor; consider more units or fewer groups", e)
	case e > 20:
		return fmt.Sprintf("error df %g is above 20: by the resource equation (Mead 1988, common practice) extra units add little precision; for animal work check the reduction principle", e)
	}
	return fmt.Sprintf("error df %g is within 10–20, the range the resource equation (Mead 1988, common practice) suggests", e)
}

// SizeText writes the readable summary.
func SizeText(w io.Writer, s Size) error {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %s, %s\n", strings.ToUpper(s.Mode[:1])+s.Mode[1:], s.TestName, s.Method)
	rows := [][2]string{
		{"design", s.Design},
		{"test", s.TestName},
		{"alpha", short(s.Alpha) + sidesText(s.Sides)},
		{"effect", s.EffectText},
	}
	if s.SDText != "" {
		rows = append(rows, [2]string{"SD", s.SDText})
	}
	if s.Mode != "power" {
		rows = append(rows, [2]string{"target power", fixed(s.Target, 2)})
	}
	rows = append(rows, [2]string{s.NUnit, fmt.Sprint(s.N)})
	if len(s.GroupSizes) > 0 && !allEqual(s.GroupSizes) {
		rows = append(rows, [2]string{"group sizes", joinInts(s.GroupSizes)})
	}
	rows = append(rows, [2]string{"total units", fmt.Sprint(s.Total)})
	if s.Dropout > 0 {
		rows = append(rows, [2]string{"allowing attrition", fmt.Sprintf("%d units in total (%d %s), for %s%% expected losses", s.TotalDropout, s.NDropout, s.NUnit, short(100*s.Dropout))})
	}
	rows = append(rows,
		[2]string{"df", dfText(s)},
		[2]string{"noncentrality", num(s.Lambda, 5)},
		[2]string{s.CritName, num(s.Crit, 5)},
		[2]string{"power", fixed(s.Power, 4)},
	)
	if s.Mode == "detectable effect" {
		rows = append(rows, [2]string{"detectable effect", effectName(s) + " = " + num(s.Detectable, 4)})
		if s.DiffDetectable > 0 {
			what := " (response units, between the two means)"
			if s.CritName != "critical t" {
				what = " (response units, between the most different means; least favourable spread)"
			}
			rows = append(rows, [2]string{"detectable difference", num(s.DiffDetectable, 4) + what})
		}
	}
	width := 0
	for _, r := range rows {
		width = max(width, runeLen(r[0]))
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %s%s  %s\n", r[0], strings.Repeat(" ", width-runeLen(r[0])), r[1])
	}
	b.WriteString("\n")
	if s.ErrorDF > 0 {
		b.WriteString(wrap("Check: "+resourceNote(s.ErrorDF)+".", 78, "  "))
	}
	for _, n := range s.Notes {
		b.WriteString(wrap("Note: "+n, 78, "  "))
	}
	b.WriteString(wrap("Caution: "+Caution, 78, "  "))
	_, err := io.WriteString(w, b.String())
	return err
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

// Justification returns the paragraph for an ethics or grant application.
func Justification(s Size) string {
	var b strings.Builder
	fmt.Fprintf(&b, "Sample size. The primary analysis is the %s (%s). ", s.TestName, s.Design)
	fmt.Fprintf(&b, "With a significance level of %s%s, ", short(s.Alpha), sidesText(s.Sides))
	switch s.Mode {
	case "power":
		fmt.Fprintf(&b, "%d %s (%d units in total) give a power of %s to detect %s. ", s.N, s.NUnit, s.Total, fixed(s.Power, 3), s.EffectText)
	case "detectable effect":
		fmt.Fprintf(&b, "%d %s (%d units in total) detect with power %s an effect of %s = %s", s.N, s.NUnit, s.Total, fixed(s.Target, 2), effectName(s), num(s.Detectable, 3))
		if s.DiffDetectable > 0 {
			fmt.Fprintf(&b, " (a difference of %s between the most different means)", num(s.DiffDetectable, 3))
		}
		b.WriteString(". ")
	default:
		fmt.Fprintf(&b, "a power of %s to detect %s requires %d %s (%d units in total; achieved power %s). ", fixed(s.Target, 2), s.EffectText, s.N, s.NUnit, s.Total, fixed(s.Power, 3))
	}
	if s.SDText != "" {
		fmt.Fprintf(&b, "The standard deviation assumed is %s. ", s.SDText)
	}
	if s.Dropout > 0 {
		fmt.Fprintf(&b, "Allowing for an expected attrition of %s%%, %d units will be enrolled (%d %s). ", short(100*s.Dropout), s.TotalDropout, s.NDropout, s.NUnit)
	}
	fmt.Fprintf(&b, "The calculation uses the exact noncentral %s distribution (df %s, noncentrality %s) and was made with allot %s by the command: %s. ",
		strings.TrimPrefix(s.CritName, "critical "), dfText(s), num(s.Lambda, 4), s.Version, s.Command)
	if s.ErrorDF > 0 {
		fmt.Fprintf(&b, "As a cross-check, the %s. ", resourceNote(s.ErrorDF))
	}
	b.WriteString("\n\n" + Caution)
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

// SizeJSON writes s as one indented JSON object.
func SizeJSON(w io.Writer, s Size) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(s)
}
