package main

import (
	"archive/zip"
	"bytes"
	"encoding/json"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
)

// blindNames are treatment names that appear nowhere else in any output.
var blindNames = []string{"zetalow", "zetamid", "zetahigh"}

func writeMice(t *testing.T, dir string) string {
	t.Helper()
	p := filepath.Join(dir, "mice.csv")
	rows := "tag,litter\n"
	for i, l := range []string{"L1", "L1", "L1", "L1", "L2", "L2", "L2", "L2", "L2", "L3", "L3", "L3", "L3", "L3", "L3"} {
		rows += "M" + string(rune('a'+i)) + "," + l + "\n"
	}
	if err := os.WriteFile(p, []byte(rows), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// xlsxVisible returns the text of a workbook's Entry and Map sheets and of
// every shared string except the plan's own description (the Study sheet's
// Factors row and the hidden sheet's plan document), which name the levels
// without saying which unit or code has which.
func xlsxVisible(t *testing.T, path string) (visible, all string) {
	t.Helper()
	r, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var vis, everything strings.Builder
	tRE := regexp.MustCompile(`<t[^>]*>([^<]*)</t>`)
	for _, f := range r.File {
		rc, _ := f.Open()
		b, _ := io.ReadAll(rc)
		rc.Close()
		everything.Write(b)
		switch f.Name {
		case "xl/worksheets/sheet2.xml", "xl/worksheets/sheet3.xml":
			vis.Write(b)
		case "xl/sharedStrings.xml":
			for _, m := range tRE.FindAllStringSubmatch(string(b), -1) {
				s := m[1]
				if strings.HasPrefix(s, "dose: ") || strings.HasPrefix(s, "{&#34;plan&#34;") || strings.HasPrefix(s, `{"plan"`) {
					continue
				}
				vis.WriteString(s + "\n")
			}
		}
	}
	return vis.String(), everything.String()
}

// TestBlindOutputsHideTheMap runs blind layouts and checks every output but
// the key: no treatment name beside a unit or code (balance table by code),
// and neither the seed nor the secret anywhere.
func TestBlindOutputsHideTheMap(t *testing.T) {
	for _, mode := range []string{"treatment", "unit"} {
		t.Run(mode, func(t *testing.T) {
			dir := t.TempDir()
			mice := writeMice(t, dir)
			key := filepath.Join(dir, "key.json")
			args := []string{"layout", "--factor", "dose=" + strings.Join(blindNames, ","), "--units", mice, "--id-column", "tag",
				"--block-column", "litter", "--block-name", "litter", "--per-block", "3", "--blind", mode, "--key", key, "--response", "score:0..10",
				"--grid", "2x2", "--order"}
			outs := map[string]string{}
			for _, ext := range []string{"xlsx", "csv", "json", "svg"} {
				flag := "-o"
				if ext == "svg" {
					flag = "--map"
				}
				p := filepath.Join(dir, "out."+ext)
				a := append(append([]string{}, args...), flag, p, "--force")
				code, stdout, stderr := runArgs(t, a...)
				if code != 0 {
					t.Fatalf("exit %d: %s", code, stderr)
				}
				outs["stdout ("+ext+" run)"] = stdout
				outs["stderr ("+ext+" run)"] = stderr
				b, _ := os.ReadFile(p)
				outs[ext] = string(b)
			}
			code, js, stderr := runArgs(t, append(args, "--json", "--force")...)
			if code != 0 {
				t.Fatal(stderr)
			}
			outs["--json"] = js
			kb, err := os.ReadFile(key)
			if err != nil {
				t.Fatal(err)
			}
			k, err := design.ParseKey(kb)
			if err != nil {
				t.Fatal(err)
			}
			st, _ := os.Stat(key)
			if st.Mode().Perm() != 0o600 {
				t.Errorf("key mode %o, want 600", st.Mode().Perm())
			}
			vis, all := xlsxVisible(t, filepath.Join(dir, "out.xlsx"))
			outs["xlsx"] = all
			outs["xlsx visible sheets"] = vis
			for name, text := range outs {
				probe := text
				switch name {
				case "json", "--json":
					// The plan lists the levels; the units must not name them.
					var doc struct {
						design.LayoutDoc
						Units []map[string]any `json:"units"`
					}
					if err := json.Unmarshal([]byte(text), &doc); err != nil {
						t.Fatalf("%s: %v", name, err)
					}
					ub, _ := json.Marshal(doc.Units)
					probe = string(ub)
					for _, u := range doc.Units {
						if u["treatment"] != float64(-1) || u["code"] == "" {
							t.Errorf("%s: unit %v is not sealed", name, u)
						}
					}
				case "xlsx":
					probe = "" // names appear in the plan description; the seed and secret must not
				default:
					// stdout names the levels once, in its treatments line.
					probe = regexp.MustCompile(`(?m)^  treatments .*$`).ReplaceAllString(text, "")
				}
				for _, n := range blindNames {
					if strings.Contains(probe, n) {
						t.Errorf("%s names treatment %q:\n%s", name, n, probe)
					}
				}
				for _, secret := range []string{k.Secret, strings.ToUpper(k.Secret), k.MAC, itoa(uint64(k.Seed))} {
					if strings.Contains(text, secret) {
						t.Errorf("%s contains the key's secret, MAC or seed %q", name, secret)
					}
				}
			}
			if !strings.Contains(outs["stdout (csv run)"], "Balance: ") || (mode == "treatment" && !strings.Contains(outs["stdout (csv run)"], "  code  ")) {
				t.Errorf("no balance table by code:\n%s", outs["stdout (csv run)"])
			}
		})
	}
}

func itoa(v uint64) string { b, _ := json.Marshal(v); return string(b) }

// TestBlindRoundTrip: the fingerprint is the same with and without the key,
// unblind records when and with which key, check and verify read the
// workbook with the key, and a key with codes reordered does not unblind.
func TestBlindRoundTrip(t *testing.T) {
	dir := t.TempDir()
	mice := writeMice(t, dir)
	key, wb := filepath.Join(dir, "key.json"), filepath.Join(dir, "mice.xlsx")
	code, out, errs := runArgs(t, "layout", "--factor", "dose=0,10,30", "--units", mice, "--id-column", "tag", "--block-column", "litter",
		"--per-block", "3", "--blind", "--key", key, "--response", "score:0..10", "-o", wb)
	if code != 0 {
		t.Fatal(errs)
	}
	fp := regexp.MustCompile(`fingerprint  ([0-9a-f]{64})`).FindStringSubmatch(out)
	if fp == nil {
		t.Fatalf("no fingerprint in %s", out)
	}
	code, cout, _ := runArgs(t, "check", wb)
	code2, kout, _ := runArgs(t, "check", wb, "--key", key)
	if !strings.Contains(cout, fp[1][:12]) || !strings.Contains(kout, fp[1][:12]) {
		t.Errorf("fingerprint %s not shown alike with (%d) and without (%d) the key:\n%s\n%s", fp[1][:12], code2, code, cout, kout)
	}
	code, vout, errs := runArgs(t, "layout", "verify", wb, "--key", key)
	if code != 0 || !strings.Contains(vout, "matches") {
		t.Errorf("verify: %d %s %s", code, vout, errs)
	}
	// A blind workbook with an edited code cell: verify names the cell even
	// without the key.
	edited := filepath.Join(dir, "edited.xlsx")
	rewriteZip(t, wb, edited, "xl/worksheets/sheet2.xml", func(s string) string {
		re := regexp.MustCompile(`(<c r="D2"[^>]*t="inlineStr"><is><t>)([^<]+)(</t>)`)
		if re.FindStringSubmatch(s) == nil {
			t.Fatal("no code cell D2")
		}
		return re.ReplaceAllString(s, "${1}ZZZ${3}")
	})
	for _, args := range [][]string{{"layout", "verify", edited}, {"layout", "verify", edited, "--key", key}} {
		if code, out, _ := runArgs(t, args...); code != exitFailed || !strings.Contains(out, `sheet "Entry" cell D2`) {
			t.Errorf("%v: exit %d, %s", args, code, out)
		}
	}
	code, uout, errs := runArgs(t, "unblind", wb, "--key", key, "-o", filepath.Join(dir, "unblinding.json"))
	if code != 0 || !strings.Contains(uout, "when ") || !strings.Contains(uout, "key       "+key) || !strings.Contains(uout, "SHA-256") {
		t.Errorf("unblind: %d %s %s", code, uout, errs)
	}
	rec, _ := os.ReadFile(filepath.Join(dir, "unblinding.json"))
	if !strings.Contains(string(rec), `"unblinded_at"`) || !strings.Contains(string(rec), `"key_sha256"`) {
		t.Errorf("unblinding record %s", rec)
	}
	// Reorder the key's codes by hand.
	kb, _ := os.ReadFile(key)
	var k design.Key
	json.Unmarshal(kb, &k)
	k.Codes[0], k.Codes[1] = k.Codes[1], k.Codes[0]
	bad, _ := json.Marshal(k)
	badKey := filepath.Join(dir, "edited-key.json")
	os.WriteFile(badKey, bad, 0o600)
	for _, args := range [][]string{{"unblind", wb, "--key", badKey}, {"check", wb, "--key", badKey}, {"layout", "verify", wb, "--key", badKey}} {
		if code, out, errs := runArgs(t, args...); code != exitUsage || strings.Contains(out, "What each code") {
			t.Errorf("%v: exit %d, %s %s", args, code, out, errs)
		}
	}
}

// TestVerifyVisibleCells: an edited visible treatment cell, and a layout
// JSON with a unit listed twice, are reported, not "matches".
func TestVerifyVisibleCells(t *testing.T) {
	dir := t.TempDir()
	wb, js := filepath.Join(dir, "t.xlsx"), filepath.Join(dir, "t.json")
	base := []string{"layout", "--factor", "feed=F0,F1,F2", "--blocks", "2", "--seed", "3", "--response", "h"}
	for _, p := range []string{wb, js} {
		if code, _, errs := runArgs(t, append(base, "-o", p)...); code != 0 {
			t.Fatal(errs)
		}
	}
	// Edit the Entry sheet's first treatment cell (D2) in the xlsx.
	edited := filepath.Join(dir, "edited.xlsx")
	rewriteZip(t, wb, edited, "xl/worksheets/sheet2.xml", func(s string) string {
		re := regexp.MustCompile(`(<c r="D2"[^>]*t="inlineStr"><is><t>)F(\d)(</t>)`)
		m := re.FindStringSubmatch(s)
		if m == nil {
			t.Fatal("no treatment cell D2")
		}
		other := map[string]string{"0": "1", "1": "2", "2": "0"}[m[2]]
		return re.ReplaceAllString(s, "${1}F"+other+"${3}")
	})
	code, out, _ := runArgs(t, "layout", "verify", edited)
	if code != exitFailed || !strings.Contains(out, `sheet "Entry" cell D2`) || strings.Contains(out, "matches") {
		t.Errorf("edited visible cell: exit %d, %s", code, out)
	}
	b, _ := os.ReadFile(js)
	var doc map[string]any
	json.Unmarshal(b, &doc)
	units := doc["units"].([]any)
	doc["units"] = append(units, units[0])
	dup, _ := json.Marshal(doc)
	os.WriteFile(filepath.Join(dir, "dup.json"), dup, 0o644)
	code, out, _ = runArgs(t, "layout", "verify", filepath.Join(dir, "dup.json"))
	if code != exitFailed || !strings.Contains(out, "listed twice") {
		t.Errorf("duplicated unit: exit %d, %s", code, out)
	}
	if !strings.Contains(string(b), `"format": "allot.layout/v1"`) {
		t.Errorf("layout JSON lacks its format: %.80s", b)
	}
}

func rewriteZip(t *testing.T, src, dst, name string, edit func(string) string) {
	t.Helper()
	r, err := zip.OpenReader(src)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var buf bytes.Buffer
	w := zip.NewWriter(&buf)
	for _, f := range r.File {
		rc, _ := f.Open()
		b, _ := io.ReadAll(rc)
		rc.Close()
		if f.Name == name {
			b = []byte(edit(string(b)))
		}
		fw, _ := w.Create(f.Name)
		fw.Write(b)
	}
	w.Close()
	os.WriteFile(dst, buf.Bytes(), 0o644)
}

// TestLayoutOutputsCheckedFirst: nothing is written when one output cannot be.
func TestLayoutOutputsCheckedFirst(t *testing.T) {
	dir := t.TempDir()
	key, wb := filepath.Join(dir, "k.json"), filepath.Join(dir, "w.xlsx")
	os.WriteFile(wb, []byte("precious"), 0o644)
	code, _, errs := runArgs(t, "layout", "--factor", "feed=A,B", "--blocks", "2", "--blind", "--key", key, "-o", wb)
	if code != exitUsage || !strings.Contains(errs, wb+" already exists") {
		t.Errorf("exit %d %s", code, errs)
	}
	if _, err := os.Stat(key); err == nil {
		t.Error("the key was written although the workbook could not be")
	}
	fresh := filepath.Join(dir, "new.xlsx")
	code, _, errs = runArgs(t, "layout", "--factor", "feed=A,B", "--blocks", "2", "--blind", "--key", fresh, "-o", fresh)
	if code != exitUsage || !strings.Contains(errs, "the same file as -o") {
		t.Errorf("key at -o: exit %d %s", code, errs)
	}
	code, _, errs = runArgs(t, "layout", "--factor", "feed=A,B", "--blocks", "2", "-o", filepath.Join(dir, "no", "such", "w.csv"))
	if code != exitUsage || !strings.Contains(errs, "does not exist") {
		t.Errorf("missing folder: exit %d %s", code, errs)
	}
}

// TestBlindCSVAndJSON: a blind CSV and its layout JSON from one run (-o
// and --json) check together with the key; verify and unblind take the
// JSON too.
func TestBlindCSVAndJSON(t *testing.T) {
	dir := t.TempDir()
	key, csvPath, jsPath := filepath.Join(dir, "k.json"), filepath.Join(dir, "t.csv"), filepath.Join(dir, "t.json")
	code, js, errs := runArgs(t, "layout", "--factor", "feed=F0,F1,F2", "--blocks", "3", "--blind", "unit", "--key", key, "--response", "h", "-o", csvPath, "--json")
	if code != 0 {
		t.Fatal(errs)
	}
	os.WriteFile(jsPath, []byte(js), 0o644)
	if code, out, errs := runArgs(t, "check", csvPath, "--plan", jsPath, "--key", key); code != 0 || !strings.Contains(out, "9 units") {
		t.Errorf("check: exit %d %s %s", code, out, errs)
	}
	if code, out, errs := runArgs(t, "layout", "verify", jsPath, "--key", key); code != 0 || !strings.Contains(out, "matches") {
		t.Errorf("verify: exit %d %s %s", code, out, errs)
	}
	if code, out, errs := runArgs(t, "unblind", jsPath, "--key", key); code != 0 || !strings.Contains(out, "Each unit's code and treatment") {
		t.Errorf("unblind: exit %d %s %s", code, out, errs)
	}
	if code, _, errs := runArgs(t, "layout", "verify", jsPath); code != exitUsage || !strings.Contains(errs, "give its key") {
		t.Errorf("verify without key: exit %d %s", code, errs)
	}
}

// TestBlindAnalyze: a filled blind workbook is analysed with its key (the
// treatments appear in the analysis) and refused without it.
func TestBlindAnalyze(t *testing.T) {
	dir := t.TempDir()
	key, wb, filledWB := filepath.Join(dir, "k.json"), filepath.Join(dir, "t.xlsx"), filepath.Join(dir, "filled.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "feed=zetaA,zetaB,zetaC", "--blocks", "4", "--blind", "unit", "--key", key, "--response", "h", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	vals := make([]float64, 12)
	for i := range vals {
		vals[i] = float64(10 + i%5)
	}
	if err := workbook.Fill(wb, filledWB, [][]float64{vals}, "", false); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runArgs(t, "analyze", filledWB, "--key", key, "--posthoc", "none")
	if code != 0 || !strings.Contains(out, "feed") || !strings.Contains(out, "source of variation") {
		t.Errorf("analyze with key: exit %d\n%s%s", code, out, errs)
	}
	if code, _, errs := runArgs(t, "analyze", filledWB); code != exitUsage || !strings.Contains(errs, "blind") {
		t.Errorf("analyze without key: exit %d %s", code, errs)
	}
}
