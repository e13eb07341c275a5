package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func TestLabelsParse(t *testing.T) {
	var got *labelsOptions
	cmd := newLabelsCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *labelsOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"trial.xlsx", "-o", "l.pdf", "--force", "--order", "unit", "--subsamples", "--page", "letter", "--sheet", "2x8",
		"--label", "99x34", "--margins", "12.9,4.6", "--gap", "2.5,0", "--start", "3", "--cut-marks"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	want := labelsOptions{file: "trial.xlsx", out: "l.pdf", force: true, order: "unit", subsamples: true, page: "letter", sheet: "2x8",
		label: "99x34", margins: "12.9,4.6", gap: "2.5,0", start: 3, cutMarks: true}
	got.now, want.now = nil, nil
	if !reflect.DeepEqual(*got, want) {
		t.Errorf("got %+v\nwant %+v", *got, want)
	}
}

func TestSheetParse(t *testing.T) {
	var got *sheetOptions
	cmd := newSheetCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *sheetOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"layout.json", "-o", "s.pdf", "--page", "letter", "--order", "measurement", "--responses", "b,a"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.file != "layout.json" || got.out != "s.pdf" || got.page != "letter" || got.order != "measurement" || got.force || strings.Join(got.responses, " ") != "b a" {
		t.Errorf("%+v", got)
	}
}

func TestLabelsGeometryFlags(t *testing.T) {
	cases := []struct {
		args                    []string
		cols, rows              int
		w, h, top, left, gh, gv float64
	}{
		{nil, 3, 7, 63.5, 38.1, 15.15, 7.25, 2.5, 0},
		{[]string{"--page", "letter"}, 3, 10, 66.675, 25.4, 12.7, 4.7625, 3.175, 0},
		{[]string{"--sheet", "2x8", "--label", "99x34", "--margins", "12.9,4.6", "--gap", "2.5,0"}, 2, 8, 99, 34, 12.9, 4.6, 2.5, 0},
		// Without margins the grid is centred; without a label size the
		// labels fill the page inside 10 mm margins.
		{[]string{"--sheet", "2x4", "--label", "90x60", "--gap", "5,5"}, 2, 4, 90, 60, (297 - 255) / 2.0, (210 - 185) / 2.0, 5, 5},
		{[]string{"--sheet", "2x5"}, 2, 5, 95, 55.4, 10, 10, 0, 0},
		{[]string{"--preset", "a4-5x13", "--gap", "0,0"}, 5, 13, 38.1, 21.2, 10.7, 9.75, 0, 0},
	}
	for _, c := range cases {
		o := &labelsOptions{}
		cmd := newLabelsCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(p *labelsOptions) error { o = p; return nil })
		cmd.SetArgs(append([]string{"t.xlsx", "-o", "l.pdf"}, c.args...))
		if err := cmd.Execute(); err != nil {
			t.Fatal(err)
		}
		s, _, err := o.geometry()
		if err != nil {
			t.Fatalf("%v: %v", c.args, err)
		}
		near := func(a, b float64) bool { return a-b < 0.01 && b-a < 0.01 }
		if s.Cols != c.cols || s.Rows != c.rows || !near(s.W, c.w) || !near(s.H, c.h) || !near(s.Top, c.top) || !near(s.Left, c.left) || !near(s.GapH, c.gh) || !near(s.GapV, c.gv) {
			t.Errorf("%v: got %+v", c.args, *s)
		}
	}
}

func TestLabelsAndSheetRun(t *testing.T) {
	dir := t.TempDir()
	layoutFiles(t, dir)
	for _, in := range []string{"trial.xlsx", "trial.json"} {
		out := filepath.Join(dir, strings.ReplaceAll(in, ".", "-")+"-labels.pdf")
		code, stdout, errs := runArgs(t, "labels", filepath.Join(dir, in), "-o", out, "--cut-marks", "--start", "2")
		want := "allot labels: wrote 6 unit labels on 1 A4 sheet(s) of 3 × 7, in unit order, to " + out + " (plan ce89fe1897fc; QR codes at error-correction level H)\n"
		if code != 0 || errs != want || stdout != "" {
			t.Errorf("labels %s: exit %d\nstdout %q\nstderr %q\nwant   %q", in, code, stdout, errs, want)
		}
		if b, err := os.ReadFile(out); err != nil || !bytes.HasPrefix(b, []byte("%PDF-")) {
			t.Errorf("labels %s: no PDF written (%v)", in, err)
		}
		code, _, errs = runArgs(t, "labels", filepath.Join(dir, in), "-o", out)
		if code != exitUsage || !strings.Contains(errs, "--force") {
			t.Errorf("labels over an existing file: exit %d\n%s", code, errs)
		}
		sheet := filepath.Join(dir, strings.ReplaceAll(in, ".", "-")+"-sheet.pdf")
		code, _, errs = runArgs(t, "sheet", filepath.Join(dir, in), "-o", sheet, "--page", "letter")
		if want := "allot sheet: wrote the recording sheet of 6 units (Letter, unit order) to " + sheet + " (plan ce89fe1897fc)\n"; code != 0 || errs != want {
			t.Errorf("sheet %s: exit %d\nstderr %q\nwant   %q", in, code, errs, want)
		}
	}
	bad := []struct {
		args []string
		msg  string
	}{
		{[]string{"labels", "trial.xlsx"}, "-o: name the PDF file"},
		{[]string{"labels", "trial.xlsx", "-o", "x.png"}, "must end in .pdf"},
		{[]string{"labels", "trial.csv", "-o", "x.pdf"}, "give the workbook (.xlsx) or the layout (.json)"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--order", "random"}, "--order random: must be measurement or unit"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--order", "measurement"}, "no measurement order"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--roll", "50x25", "--cut-marks"}, "--cut-marks is for sheets"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--roll", "50"}, "--roll 50: give two numbers"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--sheet", "3x"}, "--sheet 3x: give the columns and rows"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--sheet", "3x7", "--label", "72x38"}, "--label 72x38: 3 labels of 72 mm across"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--preset", "a4-9x9"}, "--preset a4-9x9: not a preset"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--preset", "a4-3x7", "--page", "letter"}, "is a A4 sheet, not Letter"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--start", "21"}, "--start 21: must be from 0 to 20"},
		{[]string{"labels", "trial.xlsx", "-o", "x.pdf", "--subsamples"}, "--subsamples: the plan records one measurement per unit"},
		{[]string{"sheet", "trial.xlsx", "-o", "x.pdf", "--page", "a5"}, "--page a5: must be a4 or letter"},
		{[]string{"sheet", "trial.xlsx", "-o", "x.pdf", "--responses", "mass"}, `--responses mass: response "mass" is not in the plan`},
	}
	for _, c := range bad {
		args := append([]string{}, c.args...)
		args[1] = filepath.Join(dir, args[1])
		for i, a := range args {
			if strings.HasSuffix(a, ".pdf") {
				args[i] = filepath.Join(dir, a)
			}
		}
		code, _, errs := runArgs(t, args...)
		if code != exitUsage || !strings.Contains(errs, c.msg) {
			t.Errorf("%v: exit %d, want 2 and %q:\n%s", c.args, code, c.msg, errs)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "x.pdf")); err == nil {
		t.Error("a refused command wrote x.pdf")
	}
}

// TestLabelsBlindWorkbook prints labels and a sheet from a blind workbook
// (no key needed) and extracts their text: codes, no treatment names.
func TestLabelsBlindWorkbook(t *testing.T) {
	if _, err := exec.LookPath("pdftotext"); err != nil {
		t.Skip("pdftotext is not installed (Debian: poppler-utils); skipping the text check of the PDFs")
	}
	dir := t.TempDir()
	wb := filepath.Join(dir, "mice.xlsx")
	code, _, errs := runArgs(t, "layout", "--title", "Blind labels test", "--factor", "dose=vehicle,lowdose,highdose", "--design", "rcbd",
		"--blocks", "3", "--block-name", "litter", "--seed", "11", "--blind", "--key", filepath.Join(dir, "key.json"), "--order",
		"--response", "weight_g", "--subsamples", "2", "-o", wb)
	if code != 0 {
		t.Fatal(errs)
	}
	for _, args := range [][]string{
		{"labels", wb, "-o", filepath.Join(dir, "labels.pdf"), "--subsamples"},
		{"labels", wb, "-o", filepath.Join(dir, "roll.pdf"), "--roll", "50x25"},
		{"sheet", wb, "-o", filepath.Join(dir, "sheet.pdf")},
	} {
		code, _, errs := runArgs(t, args...)
		if code != 0 {
			t.Fatalf("%v: exit %d\n%s", args, code, errs)
		}
		if args[0] == "labels" && !strings.Contains(errs, "the plan is blind: the labels show codes only") {
			t.Errorf("%v: no blind notice in\n%s", args, errs)
		}
		out, err := exec.Command("pdftotext", args[3], "-").Output()
		if err != nil {
			t.Fatal(err)
		}
		text := strings.ToLower(string(out))
		for _, name := range []string{"dose", "vehicle", "lowdose", "highdose"} {
			if strings.Contains(text, name) {
				t.Errorf("%v: the blind PDF shows %q", args, name)
			}
		}
		if !strings.Contains(text, "code") {
			t.Errorf("%v: no codes in\n%s", args, out)
		}
	}
}
