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
		{"layout_litter_blind", []string{"layout", "--factor", "dose=0,10,30", "--units", units, "--id-column", "tag", "--block-column", "litter", "--block-name", "litter", "--allow-unequal", "--blind", "--key", filepath.Join(dir, "k.json"), "--seed", "7"}},
		{"layout_litter_per_block", []string{"layout", "--factor", "dose=0,10,30", "--units", units, "--id-column", "tag", "--block-column", "litter", "--block-name", "litter", "--per-block", "3", "--blind", "unit", "--key", filepath.Join(dir, "k2.json"), "--seed", "7"}},
		{"layout_grid_spread", []string{"layout", "--factor", "feed=F0,F1,F2,F3", "--blocks", "2", "--seed", "5", "--grid", "2x3"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runLayoutSecret(t, testSecret, tt.args[1:]...)
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
	litters := filepath.Join(dir, "litters.csv")
	os.WriteFile(litters, []byte("id,litter\nA,L1\nB,L1\nC,L1\nD,L2\nE,L2\nF,L2\nG,L2\nH,L2\n"), 0o644)
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
		{[]string{"--factor", "feed=A,B", "--reps", "5000000", "--seed", "1"}, `--reps: treatment "A" has replication 5000000: more than a worksheet can hold`},
		{[]string{"--factor", "feed=A,B", "--blind", "--seed", "1"}, "--blind: give --key FILE"},
		{[]string{"--factor", "feed=A,B", "--seed", "1", "-o", "x.docx"}, "-o x.docx: the file name must end in .xlsx, .csv or .json"},
		{[]string{"--factor", "feed=A,B", "--seed", "1"}, "--reps: a completely randomised layout needs the replication"},
		{[]string{"--factor", "feed=A,B", "--blocks", "2", "--grid", "100000x100000", "--seed", "1"}, "--grid: grid \"100000x100000\": at most 1000 rows or columns and 100000 places"},
		{[]string{"--factor", "feed=A,B", "--reps", "A=2,A=3,default=1", "--seed", "1"}, `--reps: replication "A=2,A=3,default=1" gives treatment "A" twice`},
		{[]string{"--factor", "feed=A,B", "--reps", "2,default=3", "--seed", "1"}, "--reps: replication"},
		{[]string{"--factor", "feed=A,B", "--reps", "2", "--subsamples", "-1", "--seed", "1"}, "--subsamples: -1 subsamples per unit"},
		{[]string{"--factor", "feed=A,B\x00", "--reps", "2", "--seed", "1"}, "--factor: factor \"feed\": level"},
		{[]string{"--factor", "feed=A,B\nC", "--reps", "2", "--seed", "1"}, "contains a control character"},
		{[]string{"--factor", "feed=A,\xff", "--reps", "2", "--seed", "1"}, "--factor: factor \"feed\": level"},
		{[]string{"--factor", "feed=A," + strings.Repeat("x", 256), "--reps", "2", "--seed", "1"}, "is 256 characters long: at most 255"},
		{[]string{"--factor", "feed=A,B", "--response", "h\tx", "--reps", "2", "--seed", "1"}, "--response: "},
		{[]string{"--factor", "feed=A,B", "--block-name", "be\nnch", "--blocks", "2", "--seed", "1"}, "--block-name: "},
		{[]string{"--factor", "feed=A,B", "--blocks", "1", "--seed", "1"}, "--blocks: 1 blocks: a randomised complete block design needs at least 2 blocks"},
		{[]string{"--factor", "feed=A,B", "--blocks", "-3", "--design", "rcbd", "--seed", "1"}, "--blocks: -3 blocks"},
		{[]string{"--factor", "feed=A,B", "--blocks", "900000", "--seed", "1"}, "--blocks: 900000 blocks × 2 units = 1800000 units: more than a worksheet can hold"},
		{[]string{"--factor", "a=100", "--factor", "b=100", "--factor", "c=100", "--factor", "d=100", "--blocks", "2", "--seed", "1"}, "--factor: the factors make more than 10000 treatments"},
		{[]string{"--factor", "a=5000", "--blocks", "2", "--seed", "1"}, `--factor: factor "a=5000": 5000 levels; at most 1000`},
		{[]string{"--factor", "feed=A,B", "--blocks", "3", "--expect-n", "8", "--seed", "1"}, "--expect-n: the layout uses 6 units, 2 fewer than the 8 justified (3 blocks × 2 units each"},
		{[]string{"--factor", "feed=A,B", "--blocks", "3", "--per-block", "2", "--seed", "1"}, "--per-block: units per block are taken from a unit list"},
		{[]string{"--factor", "feed=A,B,C", "--units", litters, "--block-column", "litter", "--block-name", "litter", "--seed", "1"}, "--units: the litters hold 3 to 5 units, so using every unit would replicate the 3 treatments unequally within litters; give --per-block 3"},
		{[]string{"--factor", "feed=A,B,C", "--units", litters, "--block-column", "litter", "--per-block", "4", "--seed", "1"}, "--per-block: block L1 has 3 unit(s), fewer than the 4 to take"},
		{[]string{"--factor", "feed=A,B,C", "--units", litters, "--block-column", "litter", "--block-name", "litter", "--per-block", "3", "--expect-n", "12", "--seed", "1"}, "--expect-n: the layout uses 6 units, 6 fewer than the 12 justified (2 litters × 3 units each)"},
		{[]string{"--factor", "feed=A,B,C", "--units", litters, "--block-column", "litter", "--allow-unequal", "--expect-n", "6", "--seed", "1"}, "--expect-n: the layout uses 8 units, 2 more than the 6 justified (the unit list's 2 blocks hold 8 units in all; --per-block K takes K of each"},
		{[]string{"--factor", "feed=A,B", "--blind", "sideways", "--key", "k.json", "--seed", "1"}, "--blind sideways: give --blind treatment"},
		{[]string{"--factor", "feed=A,B", "--blind=sideways", "--key", "k.json", "--seed", "1"}, `--blind sideways: must be "treatment"`},
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

// testSecret replaces the blinding secret in tests whose output is compared
// with a golden file; real runs draw it from crypto/rand.
var testSecret = bytes.Repeat([]byte{0x5a}, 32)

// runLayoutSecret runs allot layout args with a fixed blinding secret.
func runLayoutSecret(t *testing.T, secret []byte, args ...string) (int, string, string) {
	t.Helper()
	var out, errw bytes.Buffer
	s := &streams{In: strings.NewReader(""), Out: &out, Err: &errw}
	cmd := newLayoutCmd(s, func(o *layoutOptions) error { o.secret = secret; return layoutRun(s, o) })
	cmd.SilenceErrors, cmd.SilenceUsage = true, true
	cmd.SetArgs(args)
	c, err := cmd.ExecuteC()
	return exitCode(s, c, err), out.String(), errw.String()
}

func TestLayoutDrawsSeed(t *testing.T) {
	code, out, errs := runArgs(t, "layout", "--factor", "feed=A,B", "--reps", "3")
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

// TestLayoutDefaults: --factor NAME=K gives K levels NAME1..NAMEK (as in
// allot size), and --blocks implies randomised blocks.
func TestLayoutDefaults(t *testing.T) {
	code, out, errs := runArgs(t, "layout", "--factor", "dose=3", "--blocks", "2", "--seed", "4")
	if code != 0 || !strings.Contains(out, "treatments   3 (dose: dose1, dose2, dose3)") || !strings.Contains(out, "randomised complete block design, 2 blocks") {
		t.Errorf("exit %d\n%s%s", code, out, errs)
	}
}
