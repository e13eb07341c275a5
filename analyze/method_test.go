package analyze

import (
	"testing"

	"github.com/allotproject/allot/column"
)

func TestForKindAndRunMethod(t *testing.T) {
	for kind, want := range map[string][2]string{"count": {MethodGLM, FamilyPoisson}, "proportion": {MethodGLM, FamilyBinomial},
		"score": {MethodRank, ""}, "": {MethodANOVA, ""}} {
		m, f := ForKind(kind)
		if m != want[0] || f != want[1] {
			t.Errorf("%q: %s %s, want %v", kind, m, f, want)
		}
	}
	d := Data{Response: "score", Values: column.Of([]string{"0", "1", "1", "2", "3", "3", "4", "2", "1"}),
		Factors: []Column{{Name: "dose", Values: column.Of([]string{"a", "a", "a", "b", "b", "b", "c", "c", "c"})}}}
	r, err := RunMethod(d, MethodOptions{Method: MethodRank})
	if err != nil || r.Rank == nil || r.Rank.Method != "Kruskal–Wallis" {
		t.Fatalf("rank without blocks: %+v, %v", r, err)
	}
	d.Block = &Column{Name: "cage", Values: column.Of([]string{"1", "2", "3", "1", "2", "3", "1", "2", "3"})}
	r, err = RunMethod(d, MethodOptions{Method: MethodRank})
	if err != nil || r.Rank == nil || r.Rank.Method != "Friedman" {
		t.Fatalf("rank with blocks: %+v, %v", r, err)
	}
	r, err = RunMethod(d, MethodOptions{Family: FamilyPoisson})
	if err != nil || r.GLM == nil {
		t.Fatalf("poisson: %+v, %v", r, err)
	}
	if _, err := RunMethod(d, MethodOptions{Method: MethodANOVA}); err == nil {
		t.Error("anova is Run's job, not RunMethod's")
	}
	if _, err := RunMethod(d, MethodOptions{Method: MethodGLM}); err == nil {
		t.Error("a GLM without a family was accepted")
	}
}
