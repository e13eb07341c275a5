package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
)

// MaxMapUnits is the largest layout whose text map is printed; larger
// layouts point to the workbook's map sheet.
const MaxMapUnits = 240

// LayoutText writes the layout summary: design, treatments, seed and
// fingerprint, the treatments × blocks balance table and a text map. A
// blind layout is written sealed: no seed, and the balance table by code,
// so that nothing but the key tells what a code stands for.
func LayoutText(w io.Writer, l design.Layout) error {
	l = l.Sealed()
	p := l.Plan
	if p.Strata() {
		return strataLayoutText(w, l)
	}
	var b strings.Builder
	tr := p.Treatments()
	labels := p.BlockLabels()
	fmt.Fprintf(&b, "Layout: %s\n", p.Title)
	kind := p.DesignName()
	if p.Design == design.RCBD {
		kind = fmt.Sprintf("%s, %s", kind, plural(p.Blocks, p.BlockName, design.Plural(p.BlockName)))
	}
	var fs []string
	for _, f := range p.Factors {
		fs = append(fs, f.Name+": "+strings.Join(f.Levels, ", "))
	}
	seed := fmt.Sprintf("%d (generator %s)", p.Seed, p.Generator)
	if p.Blind {
		seed = fmt.Sprintf("kept in the key file (generator %s)", p.Generator)
	}
	rows := [][2]string{
		{"design", kind},
		{"treatments", fmt.Sprintf("%d (%s)", len(tr), strings.Join(fs, "; "))},
		{"units", unitsText(p)},
		{"seed", seed},
		{"fingerprint", p.Fingerprint()},
	}
	if p.Control != "" {
		rows = append(rows[:2], append([][2]string{{"control", p.Control}}, rows[2:]...)...)
	}
	if len(l.Spares) > 0 {
		rows = append(rows, [2]string{"spare", spareText(l, labels)})
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %-12s %s\n", r[0], r[1])
	}
	bt := balanceTable(l, labels)
	switch {
	case p.BlindMode == design.BlindUnit:
		fmt.Fprintf(&b, "\nBalance: hidden (one code per unit); units in each %s\n", p.BlockName)
	case p.Blind && p.Design == design.RCBD:
		fmt.Fprintf(&b, "\nBalance: units of each code in each %s\n", p.BlockName)
	case p.Blind:
		b.WriteString("\nReplication: units of each code\n")
	case p.Design == design.RCBD:
		fmt.Fprintf(&b, "\nBalance: units of each treatment in each %s\n", p.BlockName)
	default:
		b.WriteString("\nReplication: units of each treatment\n")
	}
	b.WriteString(balanceText(bt, p, Width(w)))
	if len(l.Units) <= MaxMapUnits {
		writeMap(&b, l, labels, Width(w))
	} else {
		fmt.Fprintf(&b, "\nMap: %d units are too many to print here; see the workbook's Map sheet.\n", len(l.Units))
	}
	switch {
	case p.BlindMode == design.BlindUnit:
		b.WriteString("\nBlind: every unit has its own code in the map and the workbook; the key file holds each code's treatment.\n")
	case p.Blind:
		b.WriteString("\nBlind: codes replace treatment names in the map and the workbook; the key file holds their meaning.\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// balanceTable counts units by treatment (or, sealed, by code in order of
// first appearance; one row of all units for per-unit codes) and block.
func balanceTable(l design.Layout, labels []string) table {
	p := l.Plan
	first := "treatment"
	if p.Blind {
		first = "code"
	}
	bt := table{head: []string{first}, right: []bool{false}}
	for k := 1; k <= p.Blocks; k++ {
		if p.Design == design.RCBD {
			bt.head = append(bt.head, fmt.Sprintf("%s %s", p.BlockName, labels[k-1]))
		} else {
			bt.head = append(bt.head, "units")
		}
		bt.right = append(bt.right, true)
	}
	var names []string
	row := map[string]int{}
	switch {
	case p.BlindMode == design.BlindUnit:
		bt.head[0] = "units"
		names = []string{"all"}
	case p.Blind:
		for _, u := range l.Units {
			if _, ok := row[u.Code]; !ok {
				row[u.Code] = len(names)
				names = append(names, u.Code)
			}
		}
	default:
		for _, t := range p.Treatments() {
			names = append(names, t.Name)
		}
	}
	counts := make([][]int, len(names))
	for i := range counts {
		counts[i] = make([]int, p.Blocks)
	}
	for _, u := range l.Units {
		r := u.Treatment
		switch {
		case p.BlindMode == design.BlindUnit:
			r = 0
		case p.Blind:
			r = row[u.Code]
		}
		counts[r][u.Block-1]++
	}
	for i, name := range names {
		cells := []string{name}
		for _, c := range counts[i] {
			cells = append(cells, fmt.Sprint(c))
		}
		bt.rows = append(bt.rows, cells)
	}
	return bt
}

func spareText(l design.Layout, labels []string) string {
	n := len(l.Spares)
	if n > 20 {
		return fmt.Sprintf("%d units of the list are spare (not laid out); the workbook and the JSON list them", n)
	}
	var parts []string
	for i, sp := range l.Spares {
		if i == 0 || sp.Block != l.Spares[i-1].Block {
			parts = append(parts, fmt.Sprintf("%s %s: %s", l.Plan.BlockName, labels[sp.Block-1], sp.ID))
		} else {
			parts[len(parts)-1] += ", " + sp.ID
		}
	}
	return fmt.Sprintf("%d (%s; not laid out)", n, strings.Join(parts, "; "))
}

// writeMap writes each block as its grid (or as one line of positions),
// each unit as its ID and treatment (or code), with the measurement rank
// after "#" when an order was planned.
func writeMap(b *strings.Builder, l design.Layout, labels []string, lineWidth int) {
	p := l.Plan
	what := "treatment"
	if p.Blind {
		what = "code"
	}
	cellText := func(u design.Unit) string {
		t := u.ID + " " + l.Label(u)
		if u.Order > 0 {
			t += fmt.Sprintf(" #%d", u.Order)
		}
		return t
	}
	byBlock := make([][]design.Unit, p.Blocks+1)
	width := 0
	for _, u := range l.Units {
		byBlock[u.Block] = append(byBlock[u.Block], u)
		width = max(width, runeLen(cellText(u)))
	}
	if g := p.Grid; g != nil {
		fmt.Fprintf(b, "\nMap: each %s as its %d×%d grid (%s numbering); unit ID and %s", gridWord(p), g.Rows, g.Cols, g.Numbering, what)
		if p.Order {
			b.WriteString(", #measurement order")
		}
		b.WriteString("\n")
		for k := 1; k <= p.Blocks; k++ {
			if p.Design == design.RCBD {
				fmt.Fprintf(b, "  %s %s\n", p.BlockName, labels[k-1])
			}
			grid := make([][]string, g.Rows)
			for r := range grid {
				grid[r] = make([]string, g.Cols)
			}
			for _, u := range byBlock[k] {
				grid[u.Row-1][u.Col-1] = cellText(u)
			}
			for _, row := range grid {
				line := "   "
				for _, c := range row {
					if c == "" {
						c = "·"
					}
					line += "  " + c + strings.Repeat(" ", width-runeLen(c))
				}
				b.WriteString(strings.TrimRight(line, " ") + "\n")
			}
		}
		return
	}
	if p.Design == design.RCBD {
		fmt.Fprintf(b, "\nMap: position → unit ID and %s, one line per %s", what, p.BlockName)
	} else {
		b.WriteString("\nMap: position → unit ID and " + what)
	}
	if p.Order {
		b.WriteString(" (#measurement order)")
	}
	b.WriteString("\n")
	for k := 1; k <= p.Blocks; k++ {
		if p.Design == design.RCBD {
			fmt.Fprintf(b, "  %s %s:", p.BlockName, labels[k-1])
		} else {
			b.WriteString("  units:")
		}
		// Wrap a long block onto further lines within the width.
		used := 0
		for _, u := range byBlock[k] {
			e := fmt.Sprintf("  %d→%s", u.Position, cellText(u))
			if used > 0 && used+runeLen(e) > lineWidth {
				b.WriteString("\n   ")
				used = 3
			} else if used == 0 {
				used = runeLen(strings.TrimRight(lineStart(b), "\n"))
			}
			b.WriteString(e)
			used += runeLen(e)
		}
		b.WriteString("\n")
	}
}

func gridWord(p design.Plan) string {
	if p.Design == design.RCBD {
		return p.BlockName
	}
	return "layout"
}

func unitsText(p design.Plan) string {
	if p.Design != design.RCBD {
		return fmt.Sprint(p.NumUnits())
	}
	lo, hi := p.NumUnits(), 0
	for _, s := range p.BlockSizes() {
		lo, hi = min(lo, s), max(hi, s)
	}
	if lo == hi {
		return fmt.Sprintf("%d (%d per %s)", p.NumUnits(), hi, p.BlockName)
	}
	return fmt.Sprintf("%d (%d to %d per %s)", p.NumUnits(), lo, hi, p.BlockName)
}

// LayoutJSON writes the resolved plan and assignment, with the format and
// fingerprint (design.LayoutDoc). A blind layout is written sealed: the plan
// without its seed and each unit's code instead of its treatment.
func LayoutJSON(w io.Writer, l design.Layout) error {
	l = l.Sealed()
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(design.LayoutDocument(l))
}

// maxBalancePanels is the most panels a wrapped balance table may take
// before it is summarised instead (a layout of thousands of blocks would
// otherwise print thousands of columns).
const maxBalancePanels = 3

// balanceText renders the treatments × blocks table within width, wrapped
// into panels; a table that would need more than maxBalancePanels is
// summarised per treatment (fewest and most units per block, and total).
func balanceText(bt table, p design.Plan, width int) string {
	w := make([]int, len(bt.head))
	for i, h := range bt.head {
		w[i] = runeLen(h)
	}
	for _, r := range bt.rows {
		for i, c := range r {
			w[i] = max(w[i], runeLen(c))
		}
	}
	if len(bt.panels(w, 2, width)) <= maxBalancePanels {
		return bt.textWidth("  ", width)
	}
	// The row labels are the table's own (treatments, or codes for a
	// blind layout), so the summary reveals nothing the table would not.
	st := table{head: []string{bt.head[0], "fewest per " + p.BlockName, "most per " + p.BlockName, "total"}, right: []bool{false, true, true, true}}
	for _, row := range bt.rows {
		lo, hi, sum := -1, 0, 0
		for _, c := range row[1:] {
			n, _ := strconv.Atoi(c)
			if lo < 0 || n < lo {
				lo = n
			}
			hi, sum = max(hi, n), sum+n
		}
		st.rows = append(st.rows, []string{row[0], fmt.Sprint(lo), fmt.Sprint(hi), fmt.Sprint(sum)})
	}
	return fmt.Sprintf("  (%d %s, too many for a column each; --json lists every unit)\n", p.Blocks, design.Plural(p.BlockName)) +
		st.textWidth("  ", width)
}

// lineStart returns the text of b's last, unfinished line.
func lineStart(b *strings.Builder) string {
	s := b.String()
	return s[strings.LastIndex(s, "\n")+1:]
}
