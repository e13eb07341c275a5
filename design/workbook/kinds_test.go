package workbook

import (
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
)

// TestWholeNumberKinds: counts, proportions and scores are whole numbers,
// validated in the sheet and checked cell by cell on reading.
func TestWholeNumberKinds(t *testing.T) {
	resp := func(s string) design.Response {
		r, err := design.ParseResponse(s)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	p := design.Plan{Title: "kinds", Design: design.CRD, Factors: []design.Factor{{Name: "mix", Levels: []string{"a", "b"}}},
		Reps: []int{3, 3}, Blocks: 1, BlockName: "block", Seed: 5,
		Responses: []design.Response{resp("lesions:count"), resp("germinated:proportion/of=20"), resp("vigour:score/0..4")}}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "k.xlsx"), filepath.Join(dir, "k-filled.xlsx")
	if err := Write(src, l, meta, false); err != nil {
		t.Fatal(err)
	}
	vals := [][]float64{{0, 3, 2.5, 7, 1, 4}, {12, 20, 21, 15, 9, 0}, {0, 4, 3, 2, 1, 5}}
	if err := Fill(src, dst, vals, "", false); err != nil {
		t.Fatal(err)
	}
	fl, err := Read(dst, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var msgs []string
	for _, pr := range fl.Problems {
		msgs = append(msgs, pr.String())
	}
	all := strings.Join(msgs, "\n")
	for _, want := range []string{"2.5 is not a whole number: lesions is recorded as a count", "21 is outside the declared range", "5 is outside the declared range"} {
		if !strings.Contains(all, want) {
			t.Errorf("problems lack %q:\n%s", want, all)
		}
	}
}
