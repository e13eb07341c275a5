package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"
)

// TestBadInputSweep runs the bad inputs and faults that a sweep of the
// command line found (and that were fixed) and keeps them fixed: each case
// must not panic, must end with the documented exit status and a message
// naming the flag, file, sheet or cell, must leave a user's file as it was,
// and must stay within a bound on the memory it allocates. Cases that need
// large files (a cell in column XFD on 200,000 rows, a chunk count of 10¹²,
// 25,000 blocks) are in the packages' own tests: design/workbook
// (TestBoundedReading and friends), analyze (the absorbed-block tests) and
// report (the map limits).
func TestBadInputSweep(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	precious := write("precious.xlsx", "do not touch")
	// A plain workbook and a blind one with its key.
	wb := filepath.Join(dir, "plain.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "feed=A,B", "--reps", "3", "--response", "h", "--seed", "4", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	blindWB, key := filepath.Join(dir, "blind.xlsx"), filepath.Join(dir, "key.json")
	if code, _, errs := runArgs(t, "layout", "--factor", "feed=A,B,C", "--reps", "2", "--response", "h", "--blind", "--key", key, "-o", blindWB); code != 0 {
		t.Fatal(errs)
	}
	// A key whose codes were reordered.
	kb, _ := os.ReadFile(key)
	var k map[string]any
	json.Unmarshal(kb, &k)
	if codes, ok := k["codes"].([]any); ok && len(codes) > 1 {
		codes[0], codes[1] = codes[1], codes[0]
	}
	kb2, _ := json.Marshal(k)
	badKey := write("reordered-key.json", string(kb2))
	// A layout JSON with a unit listed twice.
	var lj bytes.Buffer
	code, out, _ := runArgs(t, "layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "5", "--json")
	if code != 0 {
		t.Fatal("layout --json")
	}
	lj.WriteString(out)
	var doc map[string]any
	json.Unmarshal(lj.Bytes(), &doc)
	units := doc["units"].([]any)
	doc["units"] = append(units, units[0])
	dup, _ := json.Marshal(doc)
	dupLayout := write("dup-layout.json", string(dup))
	// Unit IDs that look like numbers.
	idList := write("units.csv", "id\n007\n0123\n+1\n1e3\n")
	idWB := filepath.Join(dir, "ids.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "feed=A,B", "--units", idList, "--response", "h", "--seed", "6", "-o", idWB); code != 0 {
		t.Fatal(errs)
	}
	ragged := write("ragged.csv", "unit,feed,h\n101,A,1.5\n102,B,1,9\n103,A,2.5\n104,B,3\n")
	crOnly := write("cr.csv", "unit,feed,h\r101,A,1.5\r102,B,2.5\r103,A,2.0\r104,B,3.0\r")
	huge := write("huge.csv", "unit,feed,h\n1,A,1e160\n2,A,2e160\n3,A,1.5e160\n4,B,3e160\n5,B,4e160\n6,B,3.5e160\n")
	dupFactor := write("dupfactor.csv", "unit,feed,h\n1,A,1\n2,A,2\n3,B,3\n4,B,4\n")
	long := strings.Repeat("x", 300)

	for _, tc := range []struct {
		name string
		args []string
		code int
		want string // in stderr (or stdout for exit 0)
	}{
		{"simulation with few survivors", []string{"size", "--simulate", "--means", "1,2", "--sd", "1", "--n", "2", "--dropout", "0.5", "--sims", "50", "--seed", "1", "--quiet"}, exitOK, "not analysable"},
		{"unit IDs like numbers stay text", []string{"check", idWB}, exitOK, "4 units"},
		{"ragged CSV row", []string{"analyze", ragged, "--response", "h", "--factor", "feed"}, exitUsage, "line 3"},
		{"reordered key", []string{"unblind", blindWB, "--key", badKey}, exitUsage, "key"},
		{"huge noncentrality", []string{"size", "--groups", "2", "--f", "2e5", "--n", "50"}, exitOK, "power"},
		{"f 1e6 solves at n 2", []string{"size", "--groups", "2", "--f", "1e6"}, exitOK, "units per group  2"},
		{"values near 1e160", []string{"analyze", huge, "--response", "h", "--factor", "feed"}, exitOK, "Analysis of variance"},
		{"duplicated unit in layout JSON", []string{"layout", "verify", dupLayout}, exitFailed, "does not match"},
		{"key at the workbook's path", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "--blind", "--key", filepath.Join(dir, "same.xlsx"), "-o", filepath.Join(dir, "same.xlsx")}, exitUsage, "the same file as -o"},
		{"absurd grid", []string{"layout", "--factor", "feed=A,B", "--blocks", "2", "--grid", "100000x100000"}, exitUsage, "--grid"},
		{"a billion groups", []string{"size", "--groups", "1000000000", "--f", "0.3"}, exitUsage, "--groups"},
		{"explicit zero alpha", []string{"size", "--groups", "3", "--f", "0.3", "--alpha", "0"}, exitUsage, "--alpha"},
		{"explicit zero power", []string{"size", "--groups", "3", "--f", "0.3", "--power", "0"}, exitUsage, "--power"},
		{"explicit zero n", []string{"size", "--groups", "3", "--f", "0.3", "--n", "0"}, exitUsage, "--n"},
		{"explicit zero sides", []string{"size", "--groups", "2", "--d", "0.5", "--sides", "0"}, exitUsage, "--sides"},
		{"explicit zero pilot-conf", []string{"size", "--groups", "3", "--means", "1,2,3", "--sd", "1", "--pilot-n", "8", "--pilot-conf", "0"}, exitUsage, "--pilot-conf"},
		{"infinite block SD", []string{"size", "--simulate", "--design", "rcbd", "--means", "1,2", "--sd", "1", "--blocks", "4", "--block-sd", "Inf", "--quiet"}, exitUsage, "--block-sd"},
		{"json and markdown", []string{"analyze", wb, "--json", "--format", "markdown"}, exitUsage, "--json"},
		{"key on a plain workbook", []string{"check", wb, "--key", key}, exitUsage, "--key"},
		{"CR-only CSV", []string{"analyze", crOnly, "--response", "h", "--factor", "feed"}, exitOK, "Analysis of variance"},
		{"demo into a file", []string{"demo", "--out", precious}, exitUsage, precious},
		{"unknown help topic", []string{"help", "nosuchthing"}, exitUsage, "nosuchthing"},
		{"unknown shell", []string{"completion", "tcsh"}, exitUsage, "tcsh"},
		{"a directory as workbook", []string{"check", dir}, exitUsage, "directory"},
		{"a factor given twice", []string{"analyze", dupFactor, "--response", "h", "--factor", "feed", "--factor", "feed"}, exitUsage, "feed"},
		{"negative subsamples", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "--subsamples", "-1"}, exitUsage, "--subsamples"},
		{"duplicate reps keys", []string{"layout", "--factor", "feed=A,B", "--reps", "A=2,A=3,default=2"}, exitUsage, "--reps"},
		{"level name too long", []string{"layout", "--factor", "feed=A," + long, "--reps", "2"}, exitUsage, "--factor"},
		{"empty output name", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "-o", ""}, exitUsage, "-o"},
		{"existing output without force", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "-o", precious}, exitUsage, "--force"},
		{"blocks must be at least 2", []string{"size", "--design", "rcbd", "--groups", "3", "--f", "0.5", "--blocks", "1"}, exitUsage, "--blocks"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var before runtime.MemStats
			runtime.ReadMemStats(&before)
			done := make(chan struct{})
			var code int
			var out, errs string
			go func() {
				defer close(done)
				code, out, errs = runArgs(t, tc.args...)
			}()
			select {
			case <-done:
			case <-time.After(5 * time.Minute): // a hang guard, not a speed target
				t.Fatalf("%v did not finish", tc.args)
			}
			var after runtime.MemStats
			runtime.ReadMemStats(&after)
			if code != tc.code {
				t.Fatalf("exit %d, want %d\nstdout: %s\nstderr: %s", code, tc.code, out, errs)
			}
			if strings.Contains(errs, "panic") || strings.Contains(errs, "goroutine ") {
				t.Fatalf("panic: %s", errs)
			}
			text := errs
			if tc.code == exitOK {
				text = out + errs
			}
			if !strings.Contains(text, tc.want) {
				t.Errorf("message lacks %q:\n%s", tc.want, text)
			}
			if got := after.TotalAlloc - before.TotalAlloc; got > 2<<30 {
				t.Errorf("allocated %d MiB", got>>20)
			}
			if b, _ := os.ReadFile(precious); string(b) != "do not touch" {
				t.Fatal("a user's file was changed")
			}
		})
	}
}
