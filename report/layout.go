package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
)

// MaxMapUnits is the largest layout whose text map is printed; larger
// layouts point to the workbook's map sheet.
const MaxMapUnits = 240

// LayoutText writes the layout summary: design, treatments, seed and
// fingerprint, the treatments × blocks balance table and a text map.
func LayoutText(w io.Writer, l design.Layout) error {
	p := l.Plan
	var b strings.Builder
	tr := p.Treatments()
	fmt.Fprintf(&b, "Layout: %s\n", p.Title)
	kind := "completely randomised design"
	if p.Design == design.RCBD {
		kind = fmt.Sprintf("randomised complete block design, %s", plural(p.Blocks, p.BlockName, design.Plural(p.BlockName)))
	}
	var fs []string
	for _, f := range p.Factors {
		fs = append(fs, f.Name+": "+strings.Join(f.Levels, ", "))
	}
	rows := [][2]string{
		{"design", kind},
		{"treatments", fmt.Sprintf("%d (%s)", len(tr), strings.Join(fs, "; "))},
		{"units", unitsText(p)},
		{"seed", fmt.Sprintf("%d (generator %s)", p.Seed, p.Generator)},
		{"fingerprint", p.Fingerprint()},
	}
	if p.Control != "" {
		rows = append(rows[:2], append([][2]string{{"control", p.Control}}, rows[2:]...)...)
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %-12s %s\n", r[0], r[1])
	}
	counts := l.Counts()
	bt := table{head: []string{"treatment"}, right: []bool{false}}
	for k := 1; k <= p.Blocks; k++ {
		if p.Design == design.RCBD {
			bt.head = append(bt.head, fmt.Sprintf("%s %s", p.BlockName, p.BlockLabel(k)))
		} else {
			bt.head = append(bt.head, "units")
		}
		bt.right = append(bt.right, true)
	}
	for t, row := range counts {
		cells := []string{tr[t].Name}
		for _, c := range row {
			cells = append(cells, fmt.Sprint(c))
		}
		bt.rows = append(bt.rows, cells)
	}
	if p.Design == design.RCBD {
		fmt.Fprintf(&b, "\nBalance: units of each treatment in each %s\n", p.BlockName)
	} else {
		b.WriteString("\nReplication: units of each treatment\n")
	}
	b.WriteString(balanceText(bt, counts, p, Width(w)))
	if len(l.Units) <= MaxMapUnits {
		writeMap(&b, l, Width(w))
	} else {
		fmt.Fprintf(&b, "\nMap: %d units are too many to print here; see the workbook's Map sheet.\n", len(l.Units))
	}
	if p.Blind {
		b.WriteString("\nBlind: codes replace treatment names in the map and the workbook; the key file holds their meaning.\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// writeMap writes each block as its grid (or as one line of positions),
// each unit as its ID and treatment (or code), with the measurement rank
// after "#" when an order was planned.
func writeMap(b *strings.Builder, l design.Layout, lineWidth int) {
	p := l.Plan
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
		fmt.Fprintf(b, "\nMap: each %s as its %d×%d grid (%s numbering); unit ID and treatment", gridWord(p), g.Rows, g.Cols, g.Numbering)
		if p.Order {
			b.WriteString(", #measurement order")
		}
		b.WriteString("\n")
		for k := 1; k <= p.Blocks; k++ {
			if p.Design == design.RCBD {
				fmt.Fprintf(b, "  %s %s\n", p.BlockName, p.BlockLabel(k))
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
		fmt.Fprintf(b, "\nMap: position → unit ID and treatment, one line per %s", p.BlockName)
	} else {
		b.WriteString("\nMap: position → unit ID and treatment")
	}
	if p.Order {
		b.WriteString(" (#measurement order)")
	}
	b.WriteString("\n")
	for k := 1; k <= p.Blocks; k++ {
		if p.Design == design.RCBD {
			fmt.Fprintf(b, "  %s %s:", p.BlockName, p.BlockLabel(k))
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

// LayoutJSON writes the resolved plan and assignment, with the fingerprint.
func LayoutJSON(w io.Writer, l design.Layout) error {
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
func balanceText(bt table, counts [][]int, p design.Plan, width int) string {
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
	tr := p.Treatments()
	st := table{head: []string{"treatment", "fewest per " + p.BlockName, "most per " + p.BlockName, "total"}, right: []bool{false, true, true, true}}
	for t, row := range counts {
		lo, hi, sum := row[0], row[0], 0
		for _, c := range row {
			lo, hi, sum = min(lo, c), max(hi, c), sum+c
		}
		st.rows = append(st.rows, []string{tr[t].Name, fmt.Sprint(lo), fmt.Sprint(hi), fmt.Sprint(sum)})
	}
	return fmt.Sprintf("  (%d %s, too many for a column each; --json lists every unit)\n", p.Blocks, design.Plural(p.BlockName)) +
		st.textWidth("  ", width)
}

// lineStart returns the text of b's last, unfinished line.
func lineStart(b *strings.Builder) string {
	s := b.String()
	return s[strings.LastIndex(s, "\n")+1:]
}
