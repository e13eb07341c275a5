package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"allot/design"
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
			bt.head = append(bt.head, fmt.Sprintf("%s %d", p.BlockName, k))
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
	b.WriteString(bt.text("  "))
	if len(l.Units) <= MaxMapUnits {
		fmt.Fprintf(&b, "\nMap: position → unit ID and treatment, one line per %s\n", blockWord(p))
		byBlock := make([][]design.Unit, p.Blocks+1)
		for _, u := range l.Units {
			byBlock[u.Block] = append(byBlock[u.Block], u)
		}
		for k := 1; k <= p.Blocks; k++ {
			fmt.Fprintf(&b, "  %s %d:", blockWord(p), k)
			for _, u := range byBlock[k] {
				fmt.Fprintf(&b, "  %d→%s %s", u.Position, u.ID, tr[u.Treatment].Name)
			}
			b.WriteString("\n")
		}
	} else {
		fmt.Fprintf(&b, "\nMap: %d units are too many to print here; see the workbook's Map sheet.\n", len(l.Units))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func blockWord(p design.Plan) string {
	if p.Design == design.RCBD {
		return p.BlockName
	}
	return "layout"
}

func unitsText(p design.Plan) string {
	if p.Design == design.RCBD {
		return fmt.Sprintf("%d (%d per %s)", p.Units(), p.BlockSize(), p.BlockName)
	}
	return fmt.Sprint(p.Units())
}

// LayoutJSON writes the resolved plan and assignment, with the fingerprint.
func LayoutJSON(w io.Writer, l design.Layout) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(struct {
		Fingerprint string `json:"fingerprint"`
		design.Layout
	}{l.Plan.Fingerprint(), l})
}
