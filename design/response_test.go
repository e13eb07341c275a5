package design

import "testing"

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
