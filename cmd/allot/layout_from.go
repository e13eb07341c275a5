package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

// applyFrom fills the layout spec from the plan fragment of an
// allot size -o document, leaving alone whatever the flags (or the spec
// file) set. It returns the fragment for the note after the layout.
func (o *layoutOptions) applyFrom(c *cobra.Command) (*report.SizePlan, error) {
	b, err := os.ReadFile(o.from)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--from %s: %w", o.from, err))
	}
	p, err := report.ReadSizePlan(b)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--from %s: %w", o.from, err))
	}
	set := func(name string) bool { return c.Flags().Changed(name) || o.specFile != "" && o.specSet(name) }
	if !set("factor") {
		o.spec.Factor = nil
		for _, f := range p.Factors {
			o.spec.Factor = append(o.spec.Factor, f.Name+"="+strings.Join(f.Levels, ","))
		}
	}
	if !set("design") {
		o.spec.Design = p.Design
	}
	if !set("blocks") && p.Design == "rcbd" {
		o.spec.Blocks = p.Blocks
	}
	if !set("block-name") && p.BlockName != "" {
		o.spec.BlockName = p.BlockName
	}
	if !set("control") && p.Control != "" && len(p.Factors) == 1 {
		o.spec.Control = p.Control
	}
	if !set("reps") {
		o.spec.Reps = repsText(p)
	}
	if !set("response") && p.Response != "" {
		name := p.Response
		if p.Unit != "" && !strings.ContainsAny(p.Unit, " :,") {
			name += "_" + p.Unit
		}
		o.spec.Response = []string{name}
	}
	return &p, nil
}

// specSet reports whether the spec file set the key of flag name.
func (o *layoutOptions) specSet(name string) bool {
	b, err := os.ReadFile(o.specFile)
	if err != nil {
		return false
	}
	key := strings.ReplaceAll(name, "-", "_")
	for _, l := range strings.Split(string(b), "\n") {
		if k, _, ok := strings.Cut(strings.TrimSpace(l), "="); ok && strings.TrimSpace(k) == key {
			return true
		}
	}
	return false
}

// repsText writes the fragment's replication in --reps syntax.
func repsText(p report.SizePlan) string {
	same := true
	for _, r := range p.Reps {
		same = same && r == p.Reps[0]
	}
	if same {
		return fmt.Sprint(p.Reps[0])
	}
	names := []string{""}
	for i, f := range p.Factors {
		var next []string
		for _, n := range names {
			for _, l := range f.Levels {
				if i == 0 {
					next = append(next, l)
				} else {
					next = append(next, n+" × "+l)
				}
			}
		}
		names = next
	}
	parts := make([]string, len(p.Reps))
	for i, r := range p.Reps {
		parts[i] = fmt.Sprintf("%s=%d", names[i], r)
	}
	return strings.Join(parts, ",")
}

// fromNote says whether the laid-out N is the justified N, and why not.
func fromNote(w io.Writer, file string, p *report.SizePlan, units int, c *cobra.Command) {
	allowance := ""
	if p.Units != p.JustifiedUnits {
		allowance = fmt.Sprintf(" (%d justified by power, plus the %g%% attrition allowance)", p.JustifiedUnits, 100*p.Dropout)
	}
	if units == p.Units {
		fmt.Fprintf(w, "allot layout: %d units, as %s plans%s\n", units, file, allowance)
		return
	}
	var why []string
	for _, f := range []string{"reps", "blocks", "units", "factor", "design", "block-column", "match-on"} {
		if c.Flags().Changed(f) {
			why = append(why, "--"+f)
		}
	}
	reason := "the unit list or spec file sets the blocks"
	if len(why) > 0 {
		reason = strings.Join(why, ", ") + " on the command line changed the plan"
	}
	fmt.Fprintf(w, "allot layout: %d units, but %s plans %d%s: %s; the justification no longer matches this layout\n", units, file, p.Units, allowance, reason)
}
