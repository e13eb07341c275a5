package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestLayoutParse(t *testing.T) {
	dir := t.TempDir()
	spec := filepath.Join(dir, "trial.toml")
	os.WriteFile(spec, []byte("title = \"from file\"\ndesign = \"rcbd\"\nblocks = 4\nfactor = [\"feed=A,B\"]\nseed = 11\n"), 0o644)
	var got *layoutOptions
	cmd := newLayoutCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *layoutOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"--spec", spec, "--blocks", "6", "--block-name", "rack", "--seed", "12", "-o", "x.xlsx", "--order"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	s := got.spec
	if s.Title != "from file" || s.Blocks != 6 || s.BlockName != "rack" || *s.Seed != 12 || s.Design != "rcbd" || !s.Order || got.out != "x.xlsx" || s.IDColumn != "id" {
		t.Errorf("merged spec %+v, out %q", s, got.out)
	}
}

func TestLayoutRun(t *testing.T) {
	dir := t.TempDir()
	units := filepath.Join(dir, "mice.csv")
	os.WriteFile(units, []byte("tag,litter,weight\nM1,L1,20.1\nM2,L1,21.0\nM3,L1,19.5\nM4,L2,22.0\nM5,L2,23.1\nM6,L2,21.7\nM7,L2,20.9\n"), 0o644)
	tests := []struct {
		name string
		args []string
	}{
		{"layout_rcbd", []string{"layout", "--title", "Four feeds", "--factor", "feed=F0,F1,F2,F3", "--design", "rcbd", "--blocks", "3", "--block-name", "bench", "--seed", "42"}},
		{"layout_grid_order", []string{"layout", "--factor", "N=N0,N1", "--factor", "K=K0,K1,K2", "--design", "rcbd", "--blocks", "2", "--seed", "7", "--grid", "2x3", "--numbering", "serpentine", "--order"}},
		{"layout_crd_unequal", []string{"layout", "--factor", "diet=chow,fat,fibre", "--control", "chow", "--reps", "chow=4,default=3", "--seed", "3"}},
		{"layout_litter_blind", []string{"layout", "--factor", "dose=0,10,30", "--design", "rcbd", "--units", units, "--id-column", "tag", "--block-column", "litter", "--block-name", "litter", "--blind", "--key", filepath.Join(dir, "k.json"), "--seed", "7"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runArgs(t, tt.args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			golden(t, tt.name, out)
		})
	}
}

func TestLayoutFilesAndVerify(t *testing.T) {
	dir := t.TempDir()
	base := []string{"layout", "--factor", "feed=F0,F1,F2", "--design", "rcbd", "--blocks", "4", "--seed", "99", "--response", "height_cm:0..200"}
	for _, ext := range []string{"xlsx", "csv", "json"} {
		p := filepath.Join(dir, "trial."+ext)
		if code, _, errs := runArgs(t, append(base, "-o", p)...); code != 0 {
			t.Fatalf("%s: exit %d: %s", ext, code, errs)
		}
		// Never replaced without --force.
		before, _ := os.ReadFile(p)
		code, _, errs := runArgs(t, append(base, "-o", p, "--seed", "100")...)
		after, _ := os.ReadFile(p)
		if code != exitUsage || !strings.Contains(errs, "--force") || !bytes.Equal(before, after) {
			t.Errorf("%s: overwrite without --force: exit %d %s", ext, code, errs)
		}
	}
	for _, f := range []string{"trial.xlsx", "trial.json"} {
		code, out, errs := runArgs(t, "layout", "verify", filepath.Join(dir, f))
		if code != 0 || !strings.Contains(out, "matches: all 12 units") {
			t.Errorf("verify %s: exit %d, %q %q", f, code, out, errs)
		}
	}
	csv, _ := os.ReadFile(filepath.Join(dir, "trial.csv"))
	if !strings.HasPrefix(string(csv), "Unit,Block,Position,Treatment,height_cm,Status,Reason,Notes\n101,1,") {
		t.Errorf("csv starts %q", string(csv[:60]))
	}
	// An edited layout JSON is caught, unit by unit.
	js, _ := os.ReadFile(filepath.Join(dir, "trial.json"))
	edited := strings.Replace(string(js), `"treatment": 0`, `"treatment": 2`, 1)
	os.WriteFile(filepath.Join(dir, "edited.json"), []byte(edited), 0o644)
	code, out, _ := runArgs(t, "layout", "verify", filepath.Join(dir, "edited.json"))
	if code != exitFailed || !strings.Contains(out, "1 unit(s) differ") {
		t.Errorf("edited: exit %d, %q", code, out)
	}
}

func TestLayoutBadInput(t *testing.T) {
	dir := t.TempDir()
	dup := filepath.Join(dir, "dup.csv")
	os.WriteFile(dup, []byte("id,litter\nA,L1\nA,L1\n"), 0o644)
	small := filepath.Join(dir, "small.csv")
	os.WriteFile(small, []byte("id,litter\nA,L1\nB,L1\nC,L2\n"), 0o644)
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--factor", "feed=A,B,A", "--seed", "1"}, `--factor: factor "feed": level "A" is given twice`},
		{[]string{"--factor", "feed=A", "--seed", "1"}, `--factor: factor "feed" needs at least 2 levels`},
		{[]string{"--factor", "feed=A,B", "--control", "C", "--seed", "1"}, `--control: control "C" is not a level`},
		{[]string{"--factor", "feed=A,B,C", "--design", "rcbd", "--blocks", "2", "--grid", "1x2", "--seed", "1"}, "--grid: grid 1x2 holds 2 places, but a block has 3 units"},
		{[]string{"--factor", "feed=A,B", "--seed", "-4"}, "--seed -4: must be an unsigned whole number"},
		{[]string{"--factor", "feed=A,B", "--seed", "x"}, "--seed x: must be an unsigned whole number"},
		{[]string{"--factor", "feed=A,B", "--design", "rcbd", "--units", dup, "--block-column", "litter", "--seed", "1"}, `line 3 column "id": unit ID "A" already appears on line 2`},
		{[]string{"--factor", "feed=A,B", "--design", "rcbd", "--units", dup, "--block-column", "cage", "--seed", "1"}, `column "cage": no such column`},
		{[]string{"--factor", "feed=A,B", "--design", "rcbd", "--units", small, "--block-column", "litter", "--block-name", "litter", "--seed", "1"}, "litter L2 has 1 unit(s), fewer than the 2 treatments"},
		{[]string{"--factor", "feed=A,B", "--reps", "600000", "--seed", "1"}, "more than a worksheet can hold"},
		{[]string{"--factor", "feed=A,B", "--blind", "--seed", "1"}, "--blind: give --key FILE"},
		{[]string{"--factor", "feed=A,B", "--seed", "1", "-o", "x.docx"}, "-o x.docx: the file name must end in .xlsx, .csv or .json"},
	}
	for _, tt := range tests {
		t.Run(tt.want, func(t *testing.T) {
			code, out, errs := runArgs(t, append([]string{"layout"}, tt.args...)...)
			if code != exitUsage || out != "" || !strings.Contains(errs, tt.want) {
				t.Errorf("exit %d, stdout %q, stderr %q; want exit 2 and %q", code, out, errs, tt.want)
			}
		})
	}
}

func TestLayoutDrawsSeed(t *testing.T) {
	code, out, errs := runArgs(t, "layout", "--factor", "feed=A,B")
	if code != 0 || !strings.Contains(errs, "no --seed given; drew seed") || !strings.Contains(out, "seed ") {
		t.Errorf("exit %d, %q", code, errs)
	}
}

func TestVerifyParse(t *testing.T) {
	var got *verifyOptions
	cmd := newVerifyCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *verifyOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"trial.xlsx", "--key", "k.json"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.file != "trial.xlsx" || got.key != "k.json" {
		t.Errorf("%+v", got)
	}
	code, _, errs := runArgs(t, "layout", "verify")
	if code != exitUsage || !strings.Contains(errs, "verify takes one FILE") {
		t.Errorf("no file: exit %d %q", code, errs)
	}
}
