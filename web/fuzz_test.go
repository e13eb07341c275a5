package web

import (
	"net/http"
	"net/url"
	"strings"
	"testing"
)

// FuzzSizeForm posts arbitrary values to every field of the size form: the
// page answers or puts an error beside a field, never fails.
func FuzzSizeForm(f *testing.F) {
	f.Add("4", "", "0.25", "", "", "0.05", "0.8", "", "", "", "", "", "")
	f.Add("", "dose=3\ndiet=a,b", "0.3", "dose,diet", "", "0.05", "0.9", "", "0.1", "", "", "", "")
	f.Add("2", "", "", "", "12,15", "0.05", "0.8", "10", "", "a,b", "b", "dunnett", "lower")
	f.Add("3", "", "", "", "", "0.05", "0.8", "", "", "v,l,h", "v", "pairs-bonferroni", "higher")
	f.Add("x", "=", "-1", ",", "1,,2", "NaN", "Inf", "-5", "1e308", ",,", "?", "all", "up")
	s := newServer(f, Config{})
	f.Fuzz(func(t *testing.T, groups, factor, eff, term, means, alpha, pw, n, dropout, levels, control, compare, direction string) {
		v := url.Values{"groups": {groups}, "factor": {factor}, "f": {eff}, "term": {term}, "means": {means}, "sd": {"2"},
			"alpha": {alpha}, "power": {pw}, "n": {n}, "dropout": {dropout}, "design": {"crd"}, "sides": {"2"},
			"levels": {levels}, "control": {control}, "compare": {compare}, "direction": {direction}, "subjects": {"animals"}}
		rec := post(t, s, "/size", v)
		if rec.Code != http.StatusOK && rec.Code != http.StatusUnprocessableEntity {
			t.Fatalf("status %d for %v", rec.Code, v)
		}
		if rec.Code == http.StatusUnprocessableEntity && !strings.Contains(rec.Body.String(), `id="problems"`) {
			t.Fatalf("refused without saying why: %v", v)
		}
	})
}

// FuzzLayoutForm does the same for the layout form.
func FuzzLayoutForm(f *testing.F) {
	f.Add("feed=F0,F1,F2", "rcbd", "3", "", "2x2", "height:0..200", "42", "", "")
	f.Add("a=x,y\nb=1,2", "", "", "2", "", "", "", "unit", "8")
	f.Add("=", "crd", "-1", "a=0", "0x0", "h:9..1", "18446744073709551616", "true", "-3")
	s := newServer(f, Config{})
	f.Fuzz(func(t *testing.T, factor, dsg, blocks, reps, grid, response, seed, blind, expectN string) {
		if strings.Count(reps, ",")+len(blocks)+len(reps) > 40 {
			t.Skip("keep layouts small")
		}
		v := url.Values{"factor": {factor}, "design": {dsg}, "blocks": {blocks}, "reps": {reps}, "grid": {grid}, "response": {response}, "seed": {seed}, "blind": {blind}, "expect-n": {expectN}}
		rec := post(t, s, "/layout", v)
		if rec.Code != http.StatusOK && rec.Code != http.StatusUnprocessableEntity {
			t.Fatalf("status %d for %v", rec.Code, v)
		}
		if rec.Code == http.StatusUnprocessableEntity && !strings.Contains(rec.Body.String(), `id="problems"`) {
			t.Fatalf("refused without saying why: %v", v)
		}
	})
}
