package design

import (
	"strings"
	"testing"
)

func TestParseResponseKinds(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	for _, tc := range []struct {
		in     string
		want   Response
		errMsg bool
	}{
		{in: "lesions:count", want: Response{Name: "lesions", Kind: KindCount, Min: f(0)}},
		{in: "germinated:proportion/of=50", want: Response{Name: "germinated", Kind: KindProportion, Trials: 50, Min: f(0), Max: f(50)}},
		{in: "alive:proportion/of=housed", want: Response{Name: "alive", Kind: KindProportion, TrialsColumn: "housed", Min: f(0)}},
		{in: "lameness:score/0..4", want: Response{Name: "lameness", Kind: KindScore, Min: f(0), Max: f(4)}},
		{in: "height_cm:0..200", want: Response{Name: "height_cm", Min: f(0), Max: f(200)}},
		{in: "x:count/3", errMsg: true},
		{in: "x:proportion", errMsg: true},
		{in: "x:proportion/of=0", errMsg: true},
		{in: "x:score/4..0", errMsg: true},
		{in: "x:score/0..2.5", errMsg: true},
		{in: "x:kind", errMsg: true},
	} {
		t.Run(tc.in, func(t *testing.T) {
			r, err := ParseResponse(tc.in)
			if tc.errMsg {
				if err == nil {
					t.Fatalf("accepted: %+v", r)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			eq := func(a, b *float64) bool { return a == nil && b == nil || a != nil && b != nil && *a == *b }
			if r.Name != tc.want.Name || r.Kind != tc.want.Kind || r.Trials != tc.want.Trials || r.TrialsColumn != tc.want.TrialsColumn ||
				!eq(r.Min, tc.want.Min) || !eq(r.Max, tc.want.Max) {
				t.Fatalf("got %+v, want %+v", r, tc.want)
			}
			if err := r.validKind(); err != nil {
				t.Fatal(err)
			}
		})
	}
}

func TestTrialsColumnBecomesAResponse(t *testing.T) {
	seed := SeedText(3)
	p, err := Spec{Factor: []string{"diet=a,b"}, Reps: "4", Seed: &seed, Response: []string{"alive:proportion/of=housed"}}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Responses) != 2 || p.Responses[1].Name != "housed" || p.Responses[1].Kind != KindCount || *p.Responses[1].Min != 1 {
		t.Fatalf("responses %+v", p.Responses)
	}
}

func TestCovariatesAndTimes(t *testing.T) {
	seed := SeedText(3)
	p, err := Spec{Factor: []string{"diet=a,b"}, Reps: "3", Seed: &seed, Response: []string{"weight_g:0..80"},
		Covariate: []string{"start_g:10..40"}, Times: "0,7,14"}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, r := range p.Responses {
		names = append(names, r.Name)
	}
	if got := strings.Join(names, ","); got != "start_g,weight_g@0,weight_g@7,weight_g@14" {
		t.Fatalf("responses %s", got)
	}
	if !p.Responses[0].Covariate || p.Responses[2].Of != "weight_g" || p.Responses[2].Time != "7" || *p.Responses[2].TimeValue != 7 {
		t.Fatalf("roles %+v", p.Responses)
	}
	for _, bad := range []string{"0,0", "d1", "a@b,c", ""} {
		_, err := Spec{Factor: []string{"diet=a,b"}, Reps: "3", Seed: &seed, Response: []string{"w"}, Times: bad + ",x"}.Resolve(nil)
		if bad == "d1" {
			continue // "d1,x": two label times, valid
		}
		if err == nil {
			t.Errorf("--times %q accepted", bad+",x")
		}
	}
	// Label times carry no numbers.
	p, _ = Spec{Factor: []string{"diet=a,b"}, Reps: "3", Seed: &seed, Response: []string{"w"}, Times: "wk1,wk2"}.Resolve(nil)
	if p.Responses[0].TimeValue != nil {
		t.Error("label times got numbers")
	}
}
