// Command gen writes the input files of the side-by-side benchmark
// (bench/run.sh): plain CSV tables and a filled 100,000-unit workbook.
//
//	go run ./bench/gen DIR
package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/allotproject/allot/bench"
)

func main() {
	if len(os.Args) != 2 {
		fmt.Fprintln(os.Stderr, "usage: go run ./bench/gen DIR")
		os.Exit(2)
	}
	dir := os.Args[1]
	if err := os.MkdirAll(dir, 0o755); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	for name, t := range bench.Inputs() {
		if err := t.WriteCSV(filepath.Join(dir, name+".csv")); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
	}
	if err := bench.WriteFilledWorkbook(filepath.Join(dir, "check1e5.xlsx"), 100_000); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}
