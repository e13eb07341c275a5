package web

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"html"
	"io"
	"mime/multipart"
	"net"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"
)

func newServer(t testing.TB, cfg Config) *Server {
	t.Helper()
	if cfg.Version == "" {
		cfg.Version = "test"
	}
	s, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// post submits a url-encoded form with a valid token.
func post(t testing.TB, s *Server, path string, form url.Values) *httptest.ResponseRecorder {
	t.Helper()
	form.Set("csrf", s.token())
	req := httptest.NewRequest(http.MethodPost, "http://127.0.0.1:8722"+path, strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	rec := httptest.NewRecorder()
	s.Handler().ServeHTTP(rec, req)
	return rec
}

func get(t testing.TB, s *Server, path string) *httptest.ResponseRecorder {
	t.Helper()
	req := httptest.NewRequest(http.MethodGet, "http://127.0.0.1:8722"+path, nil)
	rec := httptest.NewRecorder()
	s.Handler().ServeHTTP(rec, req)
	return rec
}

// section returns the unescaped text of the element with id.
func section(t testing.TB, body, id string) string {
	t.Helper()
	re := regexp.MustCompile(`(?s)id="` + regexp.QuoteMeta(id) + `"[^>]*>(.*?)</pre>`)
	m := re.FindStringSubmatch(body)
	if m == nil {
		t.Fatalf("no element %q in the page", id)
	}
	return html.UnescapeString(tagRE.ReplaceAllString(m[1], ""))
}

var tagRE = regexp.MustCompile(`<[^>]+>`)

// fieldError returns the message shown beside field name, or "".
func fieldError(body, name string) string {
	re := regexp.MustCompile(`(?s)<p class="error" id="` + regexp.QuoteMeta(name) + `-error">(.*?)</p>`)
	m := re.FindStringSubmatch(body)
	if m == nil {
		return ""
	}
	return html.UnescapeString(strings.TrimPrefix(m[1], `<span class="visually-hidden">Error: </span>`))
}

func TestPagesRender(t *testing.T) {
	s := newServer(t, Config{})
	for _, p := range []string{"/", "/size", "/layout", "/check", "/static/style.css", "/static/copy.js"} {
		rec := get(t, s, p)
		if rec.Code != http.StatusOK {
			t.Errorf("GET %s: status %d", p, rec.Code)
		}
	}
	// Every input has a label, and the fields carry the flag names.
	body := get(t, s, "/size").Body.String()
	for _, name := range []string{"groups", "factor", "f", "means", "sd", "diff", "power", "alpha", "dropout", "pilot-n", "n"} {
		if !strings.Contains(body, `<label for="`+name+`">`) || !strings.Contains(body, `name="`+name+`"`) {
			t.Errorf("/size: field %q lacks its label or name", name)
		}
	}
	// The layout page offers the blind modes and the unit-list options
	// under their flag names.
	body = get(t, s, "/layout").Body.String()
	for _, name := range []string{"blind", "per-block", "allow-unequal", "expect-n", "seed"} {
		if !strings.Contains(body, `<label for="`+name+`">`) || !strings.Contains(body, `name="`+name+`"`) {
			t.Errorf("/layout: field %q lacks its label or name", name)
		}
	}
	for _, mode := range []string{`value="treatment"`, `value="unit"`, "one code per unit"} {
		if !strings.Contains(body, mode) {
			t.Errorf("/layout: no blind mode %s", mode)
		}
	}
}

func sizeValues(kv ...string) url.Values {
	v := url.Values{"design": {"crd"}, "alpha": {"0.05"}, "power": {"0.8"}, "sides": {"2"}, "pilot-conf": {"0.8"}}
	for i := 0; i < len(kv); i += 2 {
		v.Set(kv[i], kv[i+1])
	}
	return v
}

func TestSizeValid(t *testing.T) {
	s := newServer(t, Config{})
	cases := []struct {
		name string
		form url.Values
		cmd  string
		req  options.Size
	}{
		{"f", sizeValues("groups", "4", "f", "0.25", "power", "0.9"), "allot size --f 0.25 --groups 4 --power 0.9",
			options.Size{Req: power.Request{Groups: 4, F: 0.25, Power: 0.9, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Design: "crd"}},
		{"means pilot dropout", sizeValues("means", "12,15,15,18", "sd", "3", "pilot-n", "8", "dropout", "0.15"),
			"allot size --dropout 0.15 --means 12,15,15,18 --pilot-n 8 --sd 3",
			options.Size{Req: power.Request{SD: 3, PilotN: 8, Dropout: 0.15, Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Means: "12,15,15,18", Design: "crd"}},
		{"rcbd blocks", sizeValues("design", "rcbd", "groups", "5", "f", "0.6", "blocks", "6"), "allot size --blocks 6 --design rcbd --f 0.6 --groups 5",
			options.Size{Req: power.Request{Groups: 5, F: 0.6, Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Design: "rcbd", Blocks: 6, Given: map[string]bool{"blocks": true}}},
		{"factorial", sizeValues("factor", "dose=3\r\ndiet=chow,fat", "term", "dose,diet", "f", "0.3"), "allot size --f 0.3 --factor dose=3 --factor diet=chow,fat --term dose,diet",
			options.Size{Req: power.Request{F: 0.3, Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Factors: []string{"dose=3", "diet=chow,fat"}, Term: "dose,diet", Design: "crd"}},
		{"ethics", sizeValues("subjects", "animals", "response", "weight gain", "unit", "g", "sd-source", "pilot, 8 mice", "effect-reason", "welfare",
			"block-name", "litter", "design", "rcbd", "levels", "vehicle,low,high", "control", "vehicle", "diff", "2", "sd", "2", "compare", "dunnett", "direction", "higher"),
			"allot size --block-name litter --compare dunnett --control vehicle --design rcbd --diff 2 --direction higher --effect-reason welfare --levels vehicle,low,high --response 'weight gain' --sd 2 --sd-source 'pilot, 8 mice' --subjects animals --unit g",
			options.Size{Req: power.Request{Diff: 2, SD: 2, ControlName: "vehicle", Direction: "higher", Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8},
				Study:  report.Study{Subjects: "animals", Response: "weight gain", Unit: "g", SDSource: "pilot, 8 mice", EffectReason: "welfare", BlockName: "litter"},
				Design: "rcbd", Levels: "vehicle,low,high", Compare: "dunnett"}},
		{"pairs", sizeValues("groups", "4", "diff", "3", "sd", "2.5", "compare", "pairs"), "allot size --compare pairs --diff 3 --groups 4 --sd 2.5",
			options.Size{Req: power.Request{Groups: 4, Diff: 3, SD: 2.5, Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Design: "crd", Compare: "pairs"}},
		{"pairs bonferroni", sizeValues("groups", "4", "diff", "3", "sd", "2.5", "compare", "pairs-bonferroni"), "allot size --compare pairs-bonferroni --diff 3 --groups 4 --sd 2.5",
			options.Size{Req: power.Request{Groups: 4, Diff: 3, SD: 2.5, Power: 0.8, Alpha: 0.05, Sides: 2, PilotConf: 0.8}, Design: "crd", Compare: "pairs-bonferroni"}},
		{"detect", sizeValues("groups", "2", "sides", "1", "n", "10", "detect", "on", "sd", "4"), "allot size --detect --groups 2 --n 10 --sd 4 --sides 1",
			options.Size{Req: power.Request{Groups: 2, Sides: 1, N: 10, Detect: true, SD: 4, Power: 0.8, Alpha: 0.05, PilotConf: 0.8}, Design: "crd", Given: map[string]bool{"n": true, "sides": true}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rec := post(t, s, "/size", c.form)
			body := rec.Body.String()
			if rec.Code != http.StatusOK {
				t.Fatalf("status %d:\n%s", rec.Code, body)
			}
			if got := section(t, body, "size-command"); !strings.Contains(got, c.cmd) {
				t.Errorf("command %q, want %q", got, c.cmd)
			}
			// The page's JSON is what the package gives for the request the
			// command builds.
			req, study, err := c.req.Request()
			if err != nil {
				t.Fatal(err)
			}
			ans, err := power.Compute(req)
			if err != nil {
				t.Fatal(err)
			}
			var want bytes.Buffer
			if err := report.SizeJSON(&want, report.Size{Answer: ans, Study: study, Command: c.cmd, Version: "test"}, false); err != nil {
				t.Fatal(err)
			}
			if got := section(t, body, "answer-json"); got != want.String() {
				t.Errorf("page JSON:\n%s\nwant:\n%s", got, want.String())
			}
			if !strings.Contains(body, `src="data:image/svg`) {
				t.Error("no power curve")
			}
			if !strings.Contains(body, `id="justification"`) || !strings.Contains(body, "Sample size.") {
				t.Error("no justification")
			}
		})
	}
}

func TestSizeInvalidField(t *testing.T) {
	s := newServer(t, Config{})
	cases := []struct {
		field, value string
		extra        []string
		want         string
	}{
		{"groups", "four", []string{"f", "0.25"}, "not a whole number"},
		{"groups", "1", []string{"f", "0.25"}, "at least 2 groups"},
		{"factor", "dose", []string{"f", "0.25"}, "NAME=LEVELS"},
		{"factor", "dose=1", []string{"f", "0.25"}, "at least 2 levels"},
		{"term", "x", []string{"groups", "3", "f", "0.25"}, "no factor"},
		{"design", "sideways", []string{"groups", "3", "f", "0.25"}, "crd"},
		{"blocks", "1", []string{"groups", "3", "f", "0.25"}, "at least 2 blocks"},
		{"ratios", "2,x", []string{"groups", "2", "f", "0.25"}, "not a number"},
		{"means", "12,abc", []string{"sd", "3"}, "not a number"},
		{"sd", "-3", []string{"means", "1,2,3"}, "greater than 0"},
		{"diff", "zero", []string{"groups", "3", "sd", "2"}, "not a number"},
		{"f", "-0.2", []string{"groups", "3"}, "greater than 0"},
		{"eta2", "1.5", []string{"groups", "3"}, "below 1"},
		{"d", "x", []string{"groups", "2"}, "not a number"},
		{"pilot-n", "2.5", []string{"groups", "3", "f", "0.25"}, "not a whole number"},
		{"alpha", "1.5", []string{"groups", "3", "f", "0.25"}, "between 0 and 1"},
		{"power", "1.2", []string{"groups", "3", "f", "0.25"}, "below 1"},
		{"sides", "3", []string{"groups", "2", "d", "0.5"}, "1 or 2"},
		{"compare", "all", []string{"groups", "3", "f", "0.25"}, "control, dunnett, pairs (Tukey) or pairs-bonferroni"},
		{"n", "1", []string{"groups", "3", "f", "0.25"}, "no error degrees of freedom"},
		{"dropout", "1.2", []string{"groups", "3", "f", "0.25"}, "fraction"},
		{"block-share", "0.3", []string{"groups", "3", "f", "0.25"}, "randomised complete blocks"},
		{"subjects", "mice", []string{"groups", "3", "f", "0.25"}, "Must be animals, plants or units"},
		{"direction", "up", []string{"groups", "2", "diff", "2", "sd", "2"}, "Must be lower or higher"},
		{"control", "saline", []string{"levels", "vehicle,low", "diff", "2", "sd", "2", "compare", "control"}, "Is not one of the levels vehicle, low"},
		{"alpha", "0", []string{"groups", "3", "f", "0.25"}, "between 0 and 1"},
	}
	for _, c := range cases {
		t.Run(c.field+"="+c.value, func(t *testing.T) {
			v := sizeValues(c.extra...)
			v.Set(c.field, c.value)
			rec := post(t, s, "/size", v)
			body := rec.Body.String()
			if rec.Code != http.StatusUnprocessableEntity {
				t.Fatalf("status %d, want 422", rec.Code)
			}
			msg := fieldError(body, c.field)
			if !strings.Contains(msg, c.want) {
				t.Errorf("message beside %s: %q, want it to contain %q\n%s", c.field, msg, c.want, errorsIn(body))
			}
			if strings.HasPrefix(msg, "--") {
				t.Errorf("message beside %s starts with the flag: %q", c.field, msg)
			}
			if !strings.Contains(body, `id="`+c.field+`"`) || !strings.Contains(body, `aria-invalid="true"`) {
				t.Errorf("field %s not marked invalid", c.field)
			}
		})
	}
}

func errorsIn(body string) string {
	re := regexp.MustCompile(`(?s)<div class="problems".*?</div>`)
	return re.FindString(body)
}

func layoutValues(kv ...string) url.Values {
	v := url.Values{"factor": {"feed=F0,F1,F2"}, "design": {"rcbd"}, "blocks": {"3"}, "block-name": {"bench"}, "response": {"height_cm:0..200"}, "seed": {"42"}, "title": {"Feed trial"}}
	for i := 0; i < len(kv); i += 2 {
		v.Set(kv[i], kv[i+1])
	}
	return v
}

var downloadRE = regexp.MustCompile(`href="/download/([0-9a-f]+)" download="([^"]+)"`)

func downloads(body string) map[string]string {
	out := map[string]string{}
	for _, m := range downloadRE.FindAllStringSubmatch(body, -1) {
		out[m[2]] = m[1]
	}
	return out
}

func TestLayoutValid(t *testing.T) {
	s := newServer(t, Config{Now: func() time.Time { return time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC) }})
	rec := post(t, s, "/layout", layoutValues())
	body := rec.Body.String()
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
	}
	seed := design.SeedText(42)
	plan, err := design.Spec{Title: "Feed trial", Factor: []string{"feed=F0,F1,F2"}, Design: "rcbd", Blocks: 3, BlockName: "bench",
		Response: []string{"height_cm:0..200"}, Seed: &seed, IDColumn: "id"}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	lay, err := randomize.Assign(plan)
	if err != nil {
		t.Fatal(err)
	}
	var want bytes.Buffer
	if err := report.LayoutJSON(&want, lay); err != nil {
		t.Fatal(err)
	}
	if got := section(t, body, "layout-json"); got != want.String() {
		t.Errorf("layout JSON differs from randomize.Assign's:\n%s", got)
	}
	cmd := section(t, body, "layout-command")
	wantCmd := "allot layout --block-name bench --blocks 3 --design rcbd --factor feed=F0,F1,F2 --response height_cm:0..200 --seed 42 --title 'Feed trial' -o feed-trial.xlsx --map feed-trial-map.svg"
	if !strings.Contains(cmd, wantCmd) {
		t.Errorf("command %q, want %q", cmd, wantCmd)
	}
	d := downloads(body)
	for _, name := range []string{"feed-trial.xlsx", "feed-trial-map.svg", "feed-trial-map.png", "feed-trial.json", "feed-trial.csv"} {
		if d[name] == "" {
			t.Errorf("no download %s (have %v)", name, d)
		}
	}
	if strings.Contains(body, "key.json") {
		t.Error("an open plan offers a key")
	}
	if png := get(t, s, "/download/"+d["feed-trial-map.png"]); png.Code != http.StatusOK || !bytes.HasPrefix(png.Body.Bytes(), []byte("\x89PNG")) || png.Header().Get("Content-Type") != "image/png" {
		t.Errorf("PNG map: status %d, type %q", png.Code, png.Header().Get("Content-Type"))
	}
	// The workbook reads back clean, and is offered again on a second visit.
	for i := range 2 {
		rec := get(t, s, "/download/"+d["feed-trial.xlsx"])
		if rec.Code != http.StatusOK {
			t.Fatalf("download %d: status %d", i, rec.Code)
		}
		if i == 0 {
			fl := readBytes(t, rec.Body.Bytes())
			if fl.Errors() != 0 || fl.Layout.Plan.Fingerprint() != lay.Plan.Fingerprint() {
				t.Errorf("downloaded workbook: %d errors, plan %s, want %s", fl.Errors(), fl.Layout.Plan.Fingerprint(), lay.Plan.Fingerprint())
			}
		}
	}
}

func readBytes(t testing.TB, b []byte) *workbook.Filled {
	t.Helper()
	p := filepath.Join(t.TempDir(), "w.xlsx")
	if err := os.WriteFile(p, b, 0o600); err != nil {
		t.Fatal(err)
	}
	fl, err := workbook.Read(p, workbook.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return fl
}

// TestLayoutLabels plugs a labels maker in: the page offers its file.
func TestLayoutLabels(t *testing.T) {
	labels := func(l design.Layout) ([]byte, error) {
		var ids []string
		for _, u := range l.Units {
			ids = append(ids, u.ID)
		}
		return []byte(strings.Join(ids, "\n")), nil
	}
	s := newServer(t, Config{Labels: labels})
	body := post(t, s, "/layout", layoutValues()).Body.String()
	id := downloads(body)["labels.pdf"]
	if id == "" {
		t.Fatal("no labels offered")
	}
	rec := get(t, s, "/download/"+id)
	if rec.Header().Get("Content-Type") != "application/pdf" || !strings.HasPrefix(rec.Body.String(), "101\n") {
		t.Errorf("labels: %q %q", rec.Header().Get("Content-Type"), rec.Body.String())
	}
	if strings.Contains(post(t, newServer(t, Config{}), "/layout", layoutValues()).Body.String(), "labels") {
		t.Error("labels offered without a labels maker")
	}
}

// TestLayoutBlindKeyOnce lays out a blind plan in both modes: the key is
// offered once in the format of allot layout --key and unblinds the
// downloaded workbook; the drawn seed, the secret and the treatment of any
// unit appear nowhere on the page or in the other downloads.
func TestLayoutBlindKeyOnce(t *testing.T) {
	for _, mode := range []string{design.BlindTreatment, design.BlindUnit} {
		t.Run(mode, func(t *testing.T) {
			s := newServer(t, Config{})
			rec := post(t, s, "/layout", layoutValues("blind", mode, "seed", ""))
			body := rec.Body.String()
			if rec.Code != http.StatusOK {
				t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
			}
			if !strings.Contains(body, "only once") || !strings.Contains(body, "No seed was given") || !strings.Contains(body, "kept in the key only") {
				t.Error("no warning about the key or the drawn seed")
			}
			d := downloads(body)
			id := d["feed-trial-key.json"]
			if id == "" {
				t.Fatal("no key offered")
			}
			first := get(t, s, "/download/"+id)
			if first.Code != http.StatusOK {
				t.Fatalf("key: status %d", first.Code)
			}
			key, err := design.ParseKey(first.Body.Bytes())
			if err != nil {
				t.Fatalf("key: %v", err)
			}
			if key.Format != design.KeyFormat || key.BlindMode != mode {
				t.Errorf("key format %q mode %q, want %q %q", key.Format, key.BlindMode, design.KeyFormat, mode)
			}
			var again bytes.Buffer
			if err := design.WriteKey(&again, key); err != nil || again.String() != first.Body.String() {
				t.Errorf("the key is not written as allot layout --key writes it (%v)", err)
			}
			if again := get(t, s, "/download/"+id); again.Code != http.StatusNotFound {
				t.Errorf("second key download: status %d, want 404", again.Code)
			}
			cmd := section(t, body, "layout-command")
			if !strings.Contains(cmd, "--blind "+mode) || !strings.Contains(cmd, "--key feed-trial-key.json") || strings.Contains(cmd, "--seed") {
				t.Errorf("command %q: want --blind %s --key feed-trial-key.json and no --seed", cmd, mode)
			}
			// Neither the seed nor the secret is on the page.
			for what, v := range map[string]string{"seed": strconv.FormatUint(uint64(key.Seed), 10), "secret": key.Secret} {
				if strings.Contains(body, v) {
					t.Errorf("the page shows the key's %s", what)
				}
			}
			lay, err := design.DecodeLayout([]byte(section(t, body, "layout-json")))
			if err != nil {
				t.Fatal(err)
			}
			if !lay.IsSealed() || lay.Plan.Seed != 0 || lay.Codes != nil {
				t.Errorf("page JSON is not sealed: seed %d, codes %v", lay.Plan.Seed, lay.Codes)
			}
			// Treatment names (F0, F1, F2; no code can hold a digit 0-2)
			// appear only in the plan's list of treatments.
			summary := section(t, body, "layout-summary")
			if _, after, _ := strings.Cut(summary, "\n\n"); regexp.MustCompile(`F[012]`).MatchString(after) {
				t.Errorf("the summary names a unit's treatment:\n%s", after)
			}
			for _, name := range []string{"feed-trial.csv", "feed-trial-map.svg"} {
				if b := get(t, s, "/download/"+d[name]).Body.String(); regexp.MustCompile(`F[012]\b`).MatchString(b) {
					t.Errorf("%s names a treatment", name)
				}
			}
			// The workbook is sealed, and its key unblinds it to the
			// allocation the plan and seed give.
			wb := get(t, s, "/download/"+d["feed-trial.xlsx"]).Body.Bytes()
			if fl := readBytes(t, wb); !fl.Sealed {
				t.Error("the blind workbook reads without its key")
			}
			p := filepath.Join(t.TempDir(), "w.xlsx")
			if err := os.WriteFile(p, wb, 0o600); err != nil {
				t.Fatal(err)
			}
			fl, err := workbook.Read(p, workbook.ReadOptions{Key: &key})
			if err != nil {
				t.Fatal(err)
			}
			if fl.Sealed || fl.Errors() != 0 {
				t.Fatalf("with its key: sealed %v, %d errors", fl.Sealed, fl.Errors())
			}
			if diffs, err := randomize.Verify(fl.Layout); err != nil || len(diffs) != 0 {
				t.Errorf("the unblinded workbook differs from its plan and seed: %v %v", diffs, err)
			}
		})
	}
}

// TestLayoutBlindGivenSeed: a typed-in seed draws the command's warning,
// and the allocation is the one the plan and seed give (the codes are
// new every run).
func TestLayoutBlindGivenSeed(t *testing.T) {
	s := newServer(t, Config{})
	body := post(t, s, "/layout", layoutValues("blind", "unit")).Body.String()
	if !strings.Contains(body, "A seed was typed in") || !strings.Contains(section(t, body, "layout-command"), "--seed 42") {
		t.Error("no warning about a typed-in seed, or the command lacks it")
	}
	// A spec file's blind = true is one code per treatment, and the
	// command names the mode as the flag takes it.
	for v, want := range map[string]string{"true": "--blind treatment", "none": "--block-name"} {
		cmd := section(t, post(t, s, "/layout", layoutValues("blind", v)).Body.String(), "layout-command")
		if !strings.Contains(cmd, want) || v == "none" && strings.Contains(cmd, "--blind") {
			t.Errorf("blind=%s: command %q", v, cmd)
		}
	}
	key, err := design.ParseKey(get(t, s, "/download/"+downloads(body)["feed-trial-key.json"]).Body.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	seed := design.SeedText(42)
	plan, err := design.Spec{Title: "Feed trial", Factor: []string{"feed=F0,F1,F2"}, Design: "rcbd", Blocks: 3, BlockName: "bench",
		Response: []string{"height_cm:0..200"}, Seed: &seed, IDColumn: "id", Blind: design.BlindUnit}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := randomize.Assign(plan)
	if err != nil {
		t.Fatal(err)
	}
	if key.Seed != 42 || len(key.Units) != len(want.Units) {
		t.Fatalf("key seed %d with %d units", key.Seed, len(key.Units))
	}
	names := plan.Treatments()
	for i, u := range want.Units {
		if k := key.Units[i]; k.ID != u.ID || k.Treatment != names[u.Treatment].Name {
			t.Errorf("unit %s: key says %s %s, plan and seed give %s", u.ID, k.ID, k.Treatment, names[u.Treatment].Name)
		}
	}
}

func TestLayoutInvalidField(t *testing.T) {
	s := newServer(t, Config{})
	cases := []struct{ field, value, want string }{
		{"factor", "feed", "NAME=LEVEL1"},
		{"design", "sideways", "must be"},
		{"blocks", "three", "not a whole number"},
		{"blocks", "1", "at least 2 blocks"},
		{"reps", "0", "at least 1"},
		{"control", "F9", "not a level"},
		{"block-name", " ", ""},
		{"response", "h:5..1", "empty"},
		{"grid", "2by3", "ROWSxCOLS"},
		{"subsamples", "-2", "subsamples"},
		{"seed", "-1", "unsigned whole number"},
		{"", "", "at most 20000"},
	}
	for _, c := range cases {
		if c.want == "" {
			continue // an empty text field is the default
		}
		t.Run(c.field+"="+c.value, func(t *testing.T) {
			v := layoutValues(c.field, c.value)
			if c.field == "" {
				v = layoutValues("blocks", "9000", "reps", "3")
			}
			rec := post(t, s, "/layout", v)
			body := rec.Body.String()
			if rec.Code != http.StatusUnprocessableEntity {
				t.Fatalf("status %d, want 422", rec.Code)
			}
			if c.field == "" {
				if !strings.Contains(errorsIn(body), c.want) {
					t.Errorf("no message about the size limit:\n%s", errorsIn(body))
				}
				return
			}
			if msg := fieldError(body, c.field); !strings.Contains(msg, c.want) {
				t.Errorf("message beside %s: %q, want %q\n%s", c.field, msg, c.want, errorsIn(body))
			}
		})
	}
}

func TestLayoutUnitList(t *testing.T) {
	s := newServer(t, Config{})
	mice := []byte("tag,litter,weight\nM1,L1,20.1\nM2,L1,21.0\nM3,L1,19.5\nM4,L2,22.0\nM5,L2,23.1\nM6,L2,21.7\n")
	unequal := append(append([]byte(nil), mice...), "M7,L2,20.4\n"...)
	v := url.Values{"factor": {"dose=0,10,30"}, "design": {"rcbd"}, "id-column": {"tag"}, "block-column": {"litter"}, "block-name": {"litter"}, "seed": {"7"}}
	rec := postMultipart(t, s, "/layout", v, part{"units", "mice.csv", mice})
	body := rec.Body.String()
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
	}
	rows, err := design.ReadUnitList(bytes.NewReader(mice), "mice.csv", "tag", "litter", "")
	if err != nil {
		t.Fatal(err)
	}
	seed := design.SeedText(7)
	plan, err := design.Spec{Factor: []string{"dose=0,10,30"}, Design: "rcbd", IDColumn: "tag", BlockColumn: "litter", BlockName: "litter", Units: "mice.csv", Seed: &seed}.Resolve(rows)
	if err != nil {
		t.Fatal(err)
	}
	lay, err := randomize.Assign(plan)
	if err != nil {
		t.Fatal(err)
	}
	var want bytes.Buffer
	report.LayoutJSON(&want, lay)
	if got := section(t, body, "layout-json"); got != want.String() {
		t.Errorf("layout JSON differs:\n%s", got)
	}
	if cmd := section(t, body, "layout-command"); !strings.Contains(cmd, "--block-column litter") || !strings.Contains(cmd, "--id-column tag") || !strings.Contains(cmd, "--units mice.csv") {
		t.Errorf("command %q", cmd)
	}

	bad := []struct {
		name string
		p    part
		v    url.Values
		want string
	}{
		{"not csv", part{"units", "mice.txt", mice}, v, "not a .csv file"},
		{"no id column", part{"units", "mice.csv", mice}, url.Values{"factor": {"dose=0,10,30"}, "design": {"rcbd"}, "block-column": {"litter"}, "seed": {"7"}}, "mice.csv"},
		{"crd with block column", part{"units", "mice.csv", mice}, url.Values{"factor": {"dose=0,10,30"}, "design": {"crd"}, "id-column": {"tag"}, "block-column": {"litter"}, "seed": {"7"}}, "design"},
		{"unequal litters", part{"units", "mice.csv", unequal}, v, "per-block 3"},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			rec := postMultipart(t, s, "/layout", c.v, c.p)
			if rec.Code != http.StatusUnprocessableEntity {
				t.Fatalf("status %d", rec.Code)
			}
			if msg := fieldError(rec.Body.String(), "units"); !strings.Contains(msg, c.want) {
				t.Errorf("message beside units: %q, want %q\n%s", msg, c.want, errorsIn(rec.Body.String()))
			}
		})
	}
}

// TestLayoutPerBlock: per-block, allow-unequal and expect-n give the
// layout allot layout gives with the same flags, or their messages beside
// their fields.
func TestLayoutPerBlock(t *testing.T) {
	s := newServer(t, Config{})
	mice := []byte("tag,litter\nM1,L1\nM2,L1\nM3,L1\nM4,L1\nM5,L2\nM6,L2\nM7,L2\nM8,L3\nM9,L3\nM10,L3\nM11,L3\nM12,L3\n")
	rows, err := design.ReadUnitList(bytes.NewReader(mice), "mice.csv", "tag", "litter", "")
	if err != nil {
		t.Fatal(err)
	}
	base := func(kv ...string) url.Values {
		v := url.Values{"factor": {"dose=0,10,30"}, "id-column": {"tag"}, "block-column": {"litter"}, "block-name": {"litter"}, "seed": {"7"}}
		for i := 0; i < len(kv); i += 2 {
			v.Set(kv[i], kv[i+1])
		}
		return v
	}
	seed := design.SeedText(7)
	spec := design.Spec{Factor: []string{"dose=0,10,30"}, IDColumn: "tag", BlockColumn: "litter", BlockName: "litter", Units: "mice.csv", Seed: &seed}
	cases := []struct {
		name   string
		v      url.Values
		edit   func(*design.Spec)
		cmd    string
		spares int
	}{
		{"per-block", base("per-block", "3", "expect-n", "9"), func(s *design.Spec) { s.PerBlock, s.ExpectN = 3, 9 }, "--expect-n 9 --factor dose=0,10,30 --id-column tag --per-block 3", 3},
		{"allow-unequal", base("allow-unequal", "on"), func(s *design.Spec) { s.AllowUnequal = true }, "--allow-unequal --block-column litter", 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rec := postMultipart(t, s, "/layout", c.v, part{"units", "mice.csv", mice})
			body := rec.Body.String()
			if rec.Code != http.StatusOK {
				t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
			}
			sp := spec
			c.edit(&sp)
			plan, err := sp.Resolve(rows)
			if err != nil {
				t.Fatal(err)
			}
			lay, err := randomize.Assign(plan)
			if err != nil {
				t.Fatal(err)
			}
			if len(lay.Spares) != c.spares {
				t.Errorf("%d spares, want %d", len(lay.Spares), c.spares)
			}
			var want bytes.Buffer
			if err := report.LayoutJSON(&want, lay); err != nil {
				t.Fatal(err)
			}
			if got := section(t, body, "layout-json"); got != want.String() {
				t.Errorf("layout JSON differs from the plan's:\n%s", got)
			}
			if cmd := section(t, body, "layout-command"); !strings.Contains(cmd, c.cmd) {
				t.Errorf("command %q lacks %q", cmd, c.cmd)
			}
		})
	}
	bad := []struct {
		name, field, want string
		v                 url.Values
	}{
		{"unequal litters", "units", "per-block 3", base()},
		{"expect-n", "expect-n", "3 more than the 6 justified", base("per-block", "3", "expect-n", "6")},
		{"per-block not a number", "per-block", "not a whole number", base("per-block", "three")},
		{"blind mode", "blind", "offered modes", base("blind", "cage")},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			rec := postMultipart(t, s, "/layout", c.v, part{"units", "mice.csv", mice})
			if rec.Code != http.StatusUnprocessableEntity {
				t.Fatalf("status %d", rec.Code)
			}
			if msg := fieldError(rec.Body.String(), c.field); !strings.Contains(msg, c.want) {
				t.Errorf("message beside %s: %q, want %q\n%s", c.field, msg, c.want, errorsIn(rec.Body.String()))
			}
		})
	}
}

// filledWorkbook lays out a trial through the page, downloads its
// workbook and fills it with simulated values.
func filledWorkbook(t testing.TB, s *Server) []byte {
	t.Helper()
	return filledWith(t, s, nil)
}

// filledWith is filledWorkbook with the simulated values changed by edit.
func filledWith(t testing.TB, s *Server, edit func([]float64)) []byte {
	t.Helper()
	body := post(t, s, "/layout", layoutValues()).Body.String()
	wb := get(t, s, "/download/"+downloads(body)["feed-trial.xlsx"]).Body.Bytes()
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "w.xlsx"), filepath.Join(dir, "filled.xlsx")
	if err := os.WriteFile(src, wb, 0o600); err != nil {
		t.Fatal(err)
	}
	fl := readBytes(t, wb)
	ys, err := sim.Responses(fl.Layout, sim.Model{Means: []float64{50, 55, 62}, SD: 4, BlockSD: 2, Decimals: 1}, 7)
	if err != nil {
		t.Fatal(err)
	}
	if edit != nil {
		edit(ys)
	}
	if err := workbook.Fill(src, dst, [][]float64{ys}, "SIMULATED for a test", false); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(dst)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

type part struct {
	field, file string
	data        []byte
}

// postUpload posts a multipart check form.
func postUpload(t testing.TB, s *Server, values url.Values, parts ...part) *httptest.ResponseRecorder {
	t.Helper()
	return postMultipart(t, s, "/check", values, parts...)
}

// postMultipart posts a multipart form to path.
func postMultipart(t testing.TB, s *Server, path string, values url.Values, parts ...part) *httptest.ResponseRecorder {
	t.Helper()
	var b bytes.Buffer
	mw := multipart.NewWriter(&b)
	for k, vs := range values {
		for _, v := range vs {
			_ = mw.WriteField(k, v)
		}
	}
	for _, p := range parts {
		w, err := mw.CreateFormFile(p.field, p.file)
		if err != nil {
			t.Fatal(err)
		}
		w.Write(p.data)
	}
	mw.Close()
	req := httptest.NewRequest(http.MethodPost, "http://127.0.0.1:8722"+path+"?csrf="+url.QueryEscape(s.token()), &b)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	rec := httptest.NewRecorder()
	s.Handler().ServeHTTP(rec, req)
	return rec
}

func checkValues(kv ...string) url.Values {
	v := url.Values{"posthoc": {"tukey"}, "sides": {"2"}, "alpha": {"0.05"}, "ss": {"3"}}
	for i := 0; i < len(kv); i += 2 {
		v.Set(kv[i], kv[i+1])
	}
	return v
}

func TestCheckValid(t *testing.T) {
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	s := newServer(t, Config{})
	wb := filledWorkbook(t, s)
	before, _ := os.ReadDir(tmp)
	rec := postUpload(t, s, checkValues(), part{"file", "filled.xlsx", wb})
	body := rec.Body.String()
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
	}
	if !strings.Contains(body, "No problems; the data can be analysed.") {
		t.Errorf("verdict missing:\n%s", body)
	}
	// The analysis on the page is the one package analyze gives for the jobs
	// the command builds.
	fl := readBytes(t, wb)
	jobs, _, _, err := options.WorkbookJobs(fl, "filled.xlsx", "")
	if err != nil {
		t.Fatal(err)
	}
	res, err := jobs[0].Run(options.Analysis{SS: 3, Alpha: 0.05, PostHoc: "tukey", Sides: 2})
	if err != nil {
		t.Fatal(err)
	}
	var want bytes.Buffer
	report.AnalysesJSON(&want, s.cfg.Version, []report.Analysis{{Result: res, Missing: jobs[0].Missing, Unit: jobs[0].Unit, BlockName: jobs[0].BlockName, Simulated: jobs[0].Simulated}})
	if got := section(t, body, "analysis-json-0"); got != want.String() {
		t.Errorf("analysis JSON differs:\n%s\nwant\n%s", got, want.String())
	}
	m := regexp.MustCompile(`src="/download/([0-9a-f]+)\?view=1"`).FindStringSubmatch(body)
	if m == nil {
		t.Fatal("no report frame")
	}
	rep := get(t, s, "/download/"+m[1]+"?view=1")
	if rep.Code != http.StatusOK || !strings.Contains(rep.Body.String(), "<html") || !strings.Contains(rep.Header().Get("Content-Security-Policy"), "sandbox") {
		t.Errorf("report: status %d, CSP %q", rep.Code, rep.Header().Get("Content-Security-Policy"))
	}
	if cmd := section(t, body, "analyze-command"); cmd != "allot analyze filled.xlsx" {
		t.Errorf("command %q", cmd)
	}
	after, _ := os.ReadDir(tmp)
	if len(after) != len(before) {
		t.Errorf("temporary files left: %v", after)
	}
}

// TestCheckFindings uploads a workbook with a value outside its declared
// range: the page lists the finding by sheet, cell and unit, and holds the
// analysis back.
func TestCheckFindings(t *testing.T) {
	s := newServer(t, Config{})
	wb := filledWith(t, s, func(ys []float64) { ys[4] = 500 })
	fl := readBytes(t, wb)
	if fl.Errors() != 1 {
		t.Fatalf("the edited workbook has %d errors, want 1", fl.Errors())
	}
	p := fl.Problems[0]
	rec := postUpload(t, s, checkValues(), part{"file", "filled.xlsx", wb})
	body := rec.Body.String()
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d", rec.Code)
	}
	row := fmt.Sprintf("<tr class=\"error\"><td>error</td><td>%s</td><td>%s</td><td>%s</td>", p.Sheet, p.Cell, p.Unit)
	if !strings.Contains(body, row) || !strings.Contains(body, html.EscapeString(p.Msg)) {
		t.Errorf("finding %v not listed by cell", p)
	}
	if !strings.Contains(body, "The analysis waits until the errors above are corrected") || strings.Contains(body, "analysis-json-0") {
		t.Error("the analysis was not held back")
	}
}

func TestCheckInvalidField(t *testing.T) {
	s := newServer(t, Config{})
	wb := filledWorkbook(t, s)
	ok := part{"file", "filled.xlsx", wb}
	cases := []struct {
		name   string
		values url.Values
		parts  []part
		field  string
		want   string
	}{
		{"no file", checkValues(), nil, "file", "Choose the filled workbook"},
		{"not xlsx name", checkValues(), []part{{"file", "data.csv", []byte("a,b\n")}}, "file", "not an .xlsx workbook"},
		{"not xlsx content", checkValues(), []part{{"file", "data.xlsx", []byte("hello")}}, "file", "its content is not one"},
		{"broken xlsx", checkValues(), []part{{"file", "data.xlsx", []byte("PK\x03\x04garbage")}}, "file", "data.xlsx"},
		{"bad key", checkValues(), []part{ok, {"key", "k.json", []byte("{")}}, "key", "k.json"},
		{"alpha", checkValues("alpha", "2"), []part{ok}, "alpha", "between 0 and 1"},
		{"alpha text", checkValues("alpha", "five"), []part{ok}, "alpha", "not a number"},
		{"ss", checkValues("ss", "4"), []part{ok}, "ss", "1, 2 or 3"},
		{"posthoc", checkValues("posthoc", "scheffe"), []part{ok}, "posthoc", "tukey, dunnett, holm or none"},
		{"sides", checkValues("sides", "3"), []part{ok}, "sides", "1 or 2"},
		{"response", checkValues("response", "weight"), []part{ok}, "response", "no such response"},
		{"dunnett control", checkValues("posthoc", "dunnett"), []part{ok}, "posthoc", "--control LEVEL"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rec := postUpload(t, s, c.values, c.parts...)
			body := rec.Body.String()
			if rec.Code != http.StatusUnprocessableEntity {
				t.Fatalf("status %d, want 422", rec.Code)
			}
			if msg := fieldError(body, c.field); !strings.Contains(msg, c.want) {
				t.Errorf("message beside %s: %q, want %q\n%s", c.field, msg, c.want, errorsIn(body))
			}
			if strings.Contains(body, os.TempDir()+"/allot-upload") {
				t.Error("a message names the temporary file")
			}
		})
	}
}

func TestCheckOversizedUpload(t *testing.T) {
	s := newServer(t, Config{MaxUpload: 64 << 10})
	big := append([]byte("PK\x03\x04"), bytes.Repeat([]byte{0}, 200<<10)...)
	rec := postUpload(t, s, checkValues(), part{"file", "big.xlsx", big})
	if rec.Code != http.StatusRequestEntityTooLarge {
		t.Fatalf("status %d, want 413", rec.Code)
	}
	if msg := fieldError(rec.Body.String(), "file"); !strings.Contains(msg, "larger than") {
		t.Errorf("message %q", msg)
	}
}

func TestOversizedForm(t *testing.T) {
	s := newServer(t, Config{})
	v := sizeValues("groups", "3", "f", "0.25")
	v.Set("means", strings.Repeat("1,", 40<<10))
	rec := post(t, s, "/size", v)
	// The token sits after the long field in the body, so the limit stops
	// the request before the token is seen.
	if rec.Code != http.StatusRequestEntityTooLarge && rec.Code != http.StatusForbidden {
		t.Errorf("status %d, want 413 or 403", rec.Code)
	}
}

func TestGuard(t *testing.T) {
	s := newServer(t, Config{})
	form := sizeValues("groups", "3", "f", "0.25")
	do := func(mod func(*http.Request)) int {
		req := httptest.NewRequest(http.MethodPost, "http://127.0.0.1:8722/size", strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		mod(req)
		rec := httptest.NewRecorder()
		s.Handler().ServeHTTP(rec, req)
		return rec.Code
	}
	cases := []struct {
		name string
		mod  func(*http.Request)
		want int
	}{
		{"no token", func(*http.Request) {}, http.StatusForbidden},
		{"forged token", func(r *http.Request) { r.URL.RawQuery = "csrf=" + fmt.Sprint(time.Now().Unix()) + ".00ff" }, http.StatusForbidden},
		{"other server's token", func(r *http.Request) { r.URL.RawQuery = "csrf=" + url.QueryEscape(newServer(t, Config{}).token()) }, http.StatusForbidden},
		{"cross-site", func(r *http.Request) {
			r.URL.RawQuery = "csrf=" + url.QueryEscape(s.token())
			r.Header.Set("Sec-Fetch-Site", "cross-site")
		}, http.StatusForbidden},
		{"foreign host", func(r *http.Request) {
			r.URL.RawQuery = "csrf=" + url.QueryEscape(s.token())
			r.Host = "evil.example:8722"
		}, http.StatusMisdirectedRequest},
		{"valid", func(r *http.Request) { r.URL.RawQuery = "csrf=" + url.QueryEscape(s.token()) }, http.StatusOK},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := do(c.mod); got != c.want {
				t.Errorf("status %d, want %d", got, c.want)
			}
		})
	}
	expired := newServer(t, Config{Now: func() time.Time { return time.Now().Add(-13 * time.Hour) }})
	tok := expired.token()
	expired.cfg.Now = time.Now
	if expired.validToken(tok, "", httptest.NewRequest("POST", "/", nil)) {
		t.Error("a 13-hour-old token was accepted")
	}
	remote := newServer(t, Config{AllowRemote: true})
	req := httptest.NewRequest(http.MethodGet, "http://192.0.2.7:8722/", nil)
	rec := httptest.NewRecorder()
	remote.Handler().ServeHTTP(rec, req)
	if rec.Code != http.StatusOK {
		t.Errorf("--allow-remote: status %d", rec.Code)
	}
}

func TestStoreExpiry(t *testing.T) {
	now := time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC)
	st := newStore(func() time.Time { return now })
	id := st.put(item{name: "a", data: []byte("x")})
	once := st.put(item{name: "k", data: []byte("y"), once: true})
	if _, ok := st.take(id); !ok {
		t.Fatal("fresh item missing")
	}
	if _, ok := st.take(once); !ok {
		t.Fatal("key missing")
	}
	if _, ok := st.take(once); ok {
		t.Error("key served twice")
	}
	now = now.Add(storeLife + time.Second)
	if _, ok := st.take(id); ok {
		t.Error("expired item served")
	}
	if st.bytes != 0 || len(st.items) != 0 {
		t.Errorf("store holds %d bytes in %d items", st.bytes, len(st.items))
	}
}

// TestGracefulShutdown starts a request, stops the server while the
// request body is still arriving, and checks that the request is answered.
func TestGracefulShutdown(t *testing.T) {
	s := newServer(t, Config{})
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- s.Serve(ctx, ln, 10*time.Second) }()
	conn, err := net.Dial("tcp", ln.Addr().String())
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	form := sizeValues("groups", "3", "f", "0.4")
	form.Set("csrf", s.token())
	body := form.Encode()
	fmt.Fprintf(conn, "POST /size HTTP/1.1\r\nHost: %s\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: %d\r\n\r\n%s", ln.Addr(), len(body), body[:10])
	time.Sleep(100 * time.Millisecond) // let the server start reading the request
	cancel()
	time.Sleep(100 * time.Millisecond)
	io.WriteString(conn, body[10:])
	resp, err := http.ReadResponse(bufioReader(conn), nil)
	if err != nil {
		t.Fatalf("request in flight was dropped: %v", err)
	}
	if resp.StatusCode != http.StatusOK {
		t.Errorf("status %d", resp.StatusCode)
	}
	resp.Body.Close()
	if err := <-done; err != nil {
		t.Errorf("Serve: %v", err)
	}
	if _, err := net.DialTimeout("tcp", ln.Addr().String(), time.Second); err == nil {
		t.Error("server still accepts connections after shutdown")
	}
}

func bufioReader(c net.Conn) *bufio.Reader { return bufio.NewReader(c) }
