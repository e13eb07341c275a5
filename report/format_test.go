package report

import (
	"bytes"
	"fmt"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
)

func maxLineWidth(s string) int {
	m := 0
	for _, l := range strings.Split(s, "\n") {
		m = max(m, runeLen(l))
	}
	return m
}

func TestTableWraps(t *testing.T) {
	tb := table{head: []string{"treatment"}, right: []bool{false}}
	row := []string{"woodfibre"}
	for k := 1; k <= 30; k++ {
		tb.head = append(tb.head, fmt.Sprintf("bench %d", k))
		tb.right = append(tb.right, true)
		row = append(row, "1")
	}
	tb.rows = [][]string{row}
	for _, width := range []int{40, 80, 132} {
		out := tb.textWidth("  ", width)
		if got := maxLineWidth(out); got > width {
			t.Errorf("width %d: a line of %d runes:\n%s", width, got, out)
		}
		// Every column is printed once, every panel starts with the labels.
		for k := 1; k <= 30; k++ {
			if n := strings.Count(out, fmt.Sprintf("bench %d ", k)) + strings.Count(out, fmt.Sprintf("bench %d\n", k)); n != 1 {
				t.Errorf("width %d: bench %d printed %d times", width, k, n)
			}
		}
		panels := strings.Count(out, "treatment")
		if panels < 2 || strings.Count(out, "woodfibre") != panels {
			t.Errorf("width %d: %d panels:\n%s", width, panels, out)
		}
	}
	// A table that fits is one panel, as before.
	small := table{head: []string{"a", "b"}, rows: [][]string{{"1", "2"}}}
	if small.textWidth("", 80) != small.text("") || strings.Count(small.text(""), "a") != 1 {
		t.Error("a narrow table changed")
	}
}

func TestWidthOfNonTerminal(t *testing.T) {
	if w := Width(&bytes.Buffer{}); w != DefaultWidth {
		t.Errorf("Width(buffer) = %d", w)
	}
}

func TestLayoutTextStaysNarrow(t *testing.T) {
	for _, blocks := range []int{12, 60, 2000} {
		plan := design.Plan{Title: "t", Design: design.RCBD, Factors: []design.Factor{{Name: "feed", Levels: []string{"A", "B", "C"}}},
			Reps: []int{1, 1, 1}, Blocks: blocks, BlockName: "bench", Seed: 1, Generator: "allot-pcg-v1"}
		var units []design.Unit
		for k := 1; k <= blocks; k++ {
			for pos := 1; pos <= 3; pos++ {
				units = append(units, design.Unit{ID: fmt.Sprint(k*100 + pos), Block: k, Position: pos, Treatment: pos - 1})
			}
		}
		var b bytes.Buffer
		if err := LayoutText(&b, design.Layout{Plan: plan, Units: units}); err != nil {
			t.Fatal(err)
		}
		// The fingerprint line is 77 runes; nothing may be wider than 80.
		if got := maxLineWidth(b.String()); got > DefaultWidth {
			t.Errorf("%d blocks: a line of %d runes", blocks, got)
		}
		if summarised := strings.Contains(b.String(), "fewest per bench"); summarised != (blocks >= 60) {
			t.Errorf("%d blocks: summarised %v:\n%s", blocks, summarised, b.String())
		}
	}
}
