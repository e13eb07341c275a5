package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestLayoutStrata(t *testing.T) {
	tests := []struct {
		name string
		args []string
	}{
		{"layout_split_plot_blocks", []string{"--title", "Light and varieties", "--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=V1,V2,V3", "--blocks", "3", "--block-name", "room", "--whole-plot-name", "chamber", "--seed", "42"}},
		{"layout_split_plot_crd", []string{"--design", "split-plot", "--whole-plot", "diet=D1,D2", "--sub-plot", "sex=F,M", "--sub-plot", "age=young,old", "--reps", "3", "--whole-plot-name", "cage", "--seed", "9", "--order"}},
		{"layout_latin_series", []string{"--design", "latin", "--factor", "feed=A,B,C,D", "--squares", "2", "--seed", "7"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runArgs(t, append([]string{"layout"}, tt.args...)...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			golden(t, tt.name, out)
		})
	}
}

func TestLayoutStrataFiles(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		head string
	}{
		{[]string{"--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=V1,V2,V3", "--blocks", "2", "--whole-plot-name", "chamber", "--seed", "4", "--response", "dry_g"},
			"Unit,Block,Chamber,Position,Treatment,light,variety,dry_g,Status,Reason,Notes\n101,1,"},
		{[]string{"--design", "latin", "--factor", "feed=A,B,C", "--seed", "4", "--response", "gain"},
			"Unit,Position,Row,Column,Treatment,gain,Status,Reason,Notes\n101,1,1,1,"},
	} {
		base := filepath.Join(dir, c.args[1])
		for _, ext := range []string{".xlsx", ".csv", ".json"} {
			if code, _, errs := runArgs(t, append(append([]string{"layout"}, c.args...), "-o", base+ext)...); code != 0 {
				t.Fatalf("%s: exit %d: %s", ext, code, errs)
			}
		}
		csv, _ := os.ReadFile(base + ".csv")
		if !strings.HasPrefix(string(csv), c.head) {
			t.Errorf("csv starts %q, want %q", csv[:min(len(csv), 80)], c.head)
		}
		for _, ext := range []string{".xlsx", ".json"} {
			code, out, errs := runArgs(t, "layout", "verify", base+ext)
			if code != 0 || !strings.Contains(out, "matches") {
				t.Errorf("verify %s%s: exit %d %q %q", c.args[1], ext, code, out, errs)
			}
		}
	}
}

func TestLayoutStrataBadInput(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--design", "split-plot", "--sub-plot", "v=a,b", "--reps", "2"}, "--whole-plot: a split plot needs a whole-plot factor"},
		{[]string{"--design", "split-plot", "--whole-plot", "l=a,b", "--reps", "2"}, "--sub-plot: a split plot needs a sub-plot factor"},
		{[]string{"--design", "split-plot", "--whole-plot", "l=a,b", "--sub-plot", "v=a,b"}, "--reps: a split plot without blocks needs --reps R, the number of main plots"},
		{[]string{"--design", "split-plot", "--whole-plot", "l=a,b", "--sub-plot", "v=a,b", "--reps", "1", "--whole-plot-name", "cage"}, "--reps: 1 cages per whole-plot treatment"},
		{[]string{"--design", "split-plot", "--whole-plot", "l=a,b", "--sub-plot", "v=a,b", "--blocks", "2", "--whole-plot-name", "v"}, "--whole-plot-name: the whole-plot name \"v\" is also a factor's name"},
		{[]string{"--design", "split-plot", "--factor", "l=a,b", "--reps", "2"}, "--factor: a split plot takes its factors from --whole-plot"},
		{[]string{"--design", "latin", "--factor", "f=a,b"}, "--factor: 2 treatments: a Latin square needs 3 to 30"},
		{[]string{"--design", "latin", "--factor", "f=a,b,c", "--blocks", "2"}, "--blocks: the blocks of a Latin square are its rows and columns; give --squares S"},
		{[]string{"--design", "latin", "--factor", "f=a,b,c", "--grid", "3x3"}, "--grid: a Latin square of t treatments is its own t × t grid"},
		{[]string{"--factor", "f=a,b,c", "--reps", "2", "--squares", "2"}, "--squares: squares need design \"latin\""},
		{[]string{"--factor", "f=a,b,c", "--reps", "2", "--whole-plot-name", "cage"}, "--design: whole-plot and sub-plot factors need design \"split-plot\""},
	}
	for _, tt := range tests {
		t.Run(tt.want, func(t *testing.T) {
			code, out, errs := runArgs(t, append(append([]string{"layout"}, tt.args...), "--seed", "1")...)
			if code != exitUsage || out != "" || !strings.Contains(errs, tt.want) {
				t.Errorf("exit %d, stdout %q, stderr %q; want exit 2 and %q", code, out, errs, tt.want)
			}
		})
	}
}
