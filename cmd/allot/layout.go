package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

type layoutOptions struct {
	specFile string
	spec     design.Spec
	seed     string
	out      string
	mapFile  string
	paper    string
	key      string
	json     bool
	force    bool
	now      func() time.Time
}

func newLayoutCmd(s *streams, runF func(*layoutOptions) error) *cobra.Command {
	o := &layoutOptions{now: time.Now}
	cmd := &cobra.Command{
		Use:   "layout [flags]",
		Short: "Randomise treatments to units: seeded, balanced, re-derivable",
		Long: `Build the plan (treatments, replication, blocks, units, positions) and assign
treatments to units with the seeded algorithm allot-pcg-v1, which anyone can
re-derive from the recorded plan and seed (see allot layout verify).

Treatments are the levels of one --factor, or the full factorial of 2–4.
--design crd randomises all units at once; --design rcbd randomises within
each of --blocks blocks, every block holding each treatment --reps times.
--block-name names the blocks (bench, litter, day, rack) in every output.

Units are numbered block × 100 + position (101, 102, …, 201, …) unless
--units FILE.csv lists them (an ID column, and for blocks either
--block-column litter, or --match-on weight to sort on a covariate and cut
into blocks of one unit per treatment).

--blind shows codes instead of treatment names to the people who score
outcomes and writes the key (seed and codes) to --key FILE; --order adds a
randomised measurement order within each block; --grid ROWSxCOLS places each
block on a grid numbered by --numbering rows|serpentine.

-o FILE writes the data-entry workbook (.xlsx), a CSV of the same rows (.csv)
or the plan and assignment (.json). --spec FILE.toml reads everything from a
file (keys are these flag names, with _ for -); flags override it.` + "\n" + exitHelp,
		Example: `  # Four feeds on 5 benches, workbook for the technician
  allot layout --factor feed=F0,F1,F2,F3 --design rcbd --blocks 5 --block-name bench \
    --response height_cm:0..200 --seed 42 -o trial.xlsx

  # Animals blocked by litter from a list, blinded scoring, random measuring order
  allot layout --factor dose=0,10,30 --design rcbd --units mice.csv --id-column tag \
    --block-column litter --blind --key trial-key.json --order --seed 7 -o mice.xlsx

  # Re-derive a layout from its workbook
  allot layout verify trial.xlsx`,
		Args: cobra.NoArgs,
		RunE: func(c *cobra.Command, args []string) error {
			if err := o.resolveSpec(c); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return layoutRun(s, o)
		},
	}
	f := cmd.Flags()
	f.StringVar(&o.specFile, "spec", "", "read the plan from `FILE.toml`; flags override it")
	f.StringVar(&o.spec.Title, "title", "", "the experiment's `TITLE`")
	f.StringVar(&o.spec.Design, "design", "", "`crd` (completely randomised, the default) or rcbd (randomised complete blocks)")
	f.StringArrayVar(&o.spec.Factor, "factor", nil, "treatment factor `NAME=L1,L2,...`; repeat for a factorial (2–4 factors)")
	f.StringVar(&o.spec.Control, "control", "", "the control `LEVEL` (one-factor plans)")
	f.StringVar(&o.spec.Reps, "reps", "", "replication `R` (per block for rcbd), or TREATMENT=R,...,default=R")
	f.IntVar(&o.spec.Blocks, "blocks", 0, "number of blocks `B` (rcbd)")
	f.StringVar(&o.spec.BlockName, "block-name", "", "what a block is called: `NAME` such as bench, litter, day, rack (default block)")
	f.StringArrayVar(&o.spec.Response, "response", nil, "a response to record, `NAME[:MIN..MAX]`; repeat for several")
	f.StringVar(&o.seed, "seed", "", "random seed, an unsigned 64-bit `N`; without it one is drawn and printed")
	f.StringVar(&o.spec.Units, "units", "", "unit list `FILE.csv` with a header row")
	f.StringVar(&o.spec.IDColumn, "id-column", "", "unit-list column holding the unit `ID` (default id)")
	f.StringVar(&o.spec.BlockColumn, "block-column", "", "unit-list `COLUMN` that gives each unit's block (litter)")
	f.StringVar(&o.spec.MatchOn, "match-on", "", "unit-list `COLUMN` to sort on and cut into matched blocks (weight)")
	f.StringVar(&o.spec.Grid, "grid", "", "place each block on a grid of `ROWSxCOLS`")
	f.StringVar(&o.spec.Numbering, "numbering", "", "grid numbering: `rows` or serpentine")
	f.BoolVar(&o.spec.Blind, "blind", false, "show codes instead of treatment names; write the key to --key")
	f.StringVar(&o.key, "key", "", "write the blinding key to `FILE` (with --blind)")
	f.BoolVar(&o.spec.Order, "order", false, "add a randomised measurement order within each block")
	f.IntVar(&o.spec.Subsamples, "subsamples", 0, "record `N` measurements per unit, one row each (averaged to the unit for analysis)")
	f.StringVarP(&o.out, "out", "o", "", "write the layout to `FILE` (.xlsx workbook, .csv or .json)")
	f.StringVar(&o.mapFile, "map", "", "draw the printable bench map to `FILE.pdf` (all pages), or .svg/.png (one file per page: FILE-1.png, …)")
	f.StringVar(&o.paper, "paper", "a4", "paper the workbook and map are set up to print on: `a4` or letter")
	f.BoolVar(&o.json, "json", false, "print the resolved plan and assignment as JSON")
	f.BoolVar(&o.force, "force", false, "replace existing output files")
	cmd.AddCommand(newVerifyCmd(s, nil))
	return cmd
}

// resolveSpec merges the spec file and the flags that were set.
func (o *layoutOptions) resolveSpec(c *cobra.Command) error {
	flags := o.spec
	if o.specFile != "" {
		b, err := os.ReadFile(o.specFile)
		if err != nil {
			return inputErr(fmt.Errorf("--spec %s: %w", o.specFile, err))
		}
		sp, err := design.ParseSpec(o.specFile, b)
		if err != nil {
			return inputErr(fmt.Errorf("--spec %w", err))
		}
		if sp.Units != "" && !filepath.IsAbs(sp.Units) {
			sp.Units = filepath.Join(filepath.Dir(o.specFile), sp.Units)
		}
		changed := c.Flags().Changed
		set := func(name string, dst *string, v string) {
			if changed(name) {
				*dst = v
			}
		}
		set("title", &sp.Title, flags.Title)
		set("design", &sp.Design, flags.Design)
		set("control", &sp.Control, flags.Control)
		set("reps", &sp.Reps, flags.Reps)
		set("block-name", &sp.BlockName, flags.BlockName)
		set("units", &sp.Units, flags.Units)
		set("id-column", &sp.IDColumn, flags.IDColumn)
		set("block-column", &sp.BlockColumn, flags.BlockColumn)
		set("match-on", &sp.MatchOn, flags.MatchOn)
		set("grid", &sp.Grid, flags.Grid)
		set("numbering", &sp.Numbering, flags.Numbering)
		if changed("factor") {
			sp.Factor = flags.Factor
		}
		if changed("response") {
			sp.Response = flags.Response
		}
		if changed("blocks") {
			sp.Blocks = flags.Blocks
		}
		if changed("blind") {
			sp.Blind = flags.Blind
		}
		if changed("order") {
			sp.Order = flags.Order
		}
		if changed("subsamples") {
			sp.Subsamples = flags.Subsamples
		}
		o.spec = sp
	}
	if o.seed != "" {
		v, err := strconv.ParseUint(strings.TrimSpace(o.seed), 10, 64)
		if err != nil {
			return usagef("--seed %s: must be an unsigned whole number below 2^64, for example --seed 20261201", o.seed)
		}
		o.spec.Seed = &v
	}
	if o.spec.IDColumn == "" {
		o.spec.IDColumn = "id"
	}
	if o.spec.Blind && o.key == "" {
		return usagef("--blind: give --key FILE for the unblinding key, and keep that file from the people who score outcomes")
	}
	if !o.spec.Blind && o.key != "" {
		return usagef("--key %s: a key is written only for a --blind layout", o.key)
	}
	if o.mapFile != "" {
		switch strings.ToLower(filepath.Ext(o.mapFile)) {
		case ".svg", ".png", ".pdf":
		default:
			return usagef("--map %s: the file name must end in .pdf, .svg or .png", o.mapFile)
		}
	}
	if !workbook.ValidPaper(o.paper) {
		return usagef("--paper %s: must be a4 or letter", o.paper)
	}
	if o.out != "" {
		switch strings.ToLower(filepath.Ext(o.out)) {
		case ".xlsx", ".csv", ".json":
		default:
			return usagef("-o %s: the file name must end in .xlsx, .csv or .json", o.out)
		}
	}
	return nil
}

// planError maps a design error to its flag.
func planError(err error) error {
	var de *design.Error
	if errors.As(err, &de) {
		flag := map[string]string{"factor": "factor", "control": "control", "reps": "reps", "blocks": "blocks",
			"block_name": "block-name", "response": "response", "design": "design", "units": "units", "grid": "grid", "seed": "seed", "subsamples": "subsamples"}[de.Field]
		if flag == "" {
			flag = de.Field
		}
		return inputErr(fmt.Errorf("--%s: %s", flag, de.Msg))
	}
	var ue *design.CSVError
	if errors.As(err, &ue) {
		return inputErr(fmt.Errorf("--units %w", err))
	}
	return inputErr(err)
}

func layoutRun(s *streams, o *layoutOptions) error {
	if o.spec.Seed == nil {
		seed, err := randomize.NewSeed()
		if err != nil {
			return err
		}
		o.spec.Seed = &seed
		fmt.Fprintf(s.Err, "allot layout: no --seed given; drew seed %d (recorded in the plan; give --seed %d to repeat this layout)\n", seed, seed)
	}
	var units []design.UnitRow
	if o.spec.Units != "" {
		b, err := os.ReadFile(o.spec.Units)
		if err != nil {
			return inputErr(fmt.Errorf("--units %s: %w", o.spec.Units, err))
		}
		units, err = design.ReadUnitList(bytes.NewReader(b), o.spec.Units, o.spec.IDColumn, o.spec.BlockColumn, o.spec.MatchOn)
		if err != nil {
			return planError(err)
		}
	}
	plan, err := o.spec.Resolve(units)
	if err != nil {
		return planError(err)
	}
	lay, err := randomize.Assign(plan)
	if err != nil {
		return planError(err)
	}
	if o.out != "" {
		if err := writeLayout(o.out, lay, o); err != nil {
			return err
		}
		fmt.Fprintf(s.Err, "allot layout: wrote %s\n", o.out)
	}
	if o.mapFile != "" {
		written, err := report.WriteMap(o.mapFile, lay, o.paper, o.force)
		if err != nil {
			return inputErr(fmt.Errorf("--map %s: %w", o.mapFile, err))
		}
		fmt.Fprintf(s.Err, "allot layout: wrote the map to %s\n", strings.Join(written, ", "))
	}
	if plan.Blind {
		if err := writeJSONFile(o.key, design.KeyOf(lay), o.force); err != nil {
			return inputErr(err)
		}
		fmt.Fprintf(s.Err, "allot layout: wrote the unblinding key to %s; keep it from the people who score outcomes\n", o.key)
	}
	if o.json {
		return report.LayoutJSON(s.Out, lay)
	}
	return report.LayoutText(s.Out, lay)
}

func writeLayout(path string, lay design.Layout, o *layoutOptions) error {
	var err error
	switch strings.ToLower(filepath.Ext(path)) {
	case ".xlsx":
		err = workbook.Write(path, lay, workbook.Meta{Version: version.String(), Created: o.now(), Paper: strings.ToLower(o.paper)}, o.force)
	case ".csv":
		err = atomicfile.Write(path, o.force, func(w io.Writer) error { return workbook.WriteCSV(w, lay) })
	case ".json":
		err = atomicfile.Write(path, o.force, func(w io.Writer) error { return report.LayoutJSON(w, lay) })
	}
	if err != nil {
		return inputErr(err)
	}
	return nil
}

func writeJSONFile(path string, v any, force bool) error {
	return atomicfile.Write(path, force, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(v)
	})
}

type verifyOptions struct {
	file string
	key  string
}

func newVerifyCmd(s *streams, runF func(*verifyOptions) error) *cobra.Command {
	o := &verifyOptions{}
	cmd := &cobra.Command{
		Use:   "verify FILE",
		Short: "Re-derive a layout from its recorded plan and seed",
		Long: `Read the plan, seed and assignment recorded in FILE (a workbook written by
allot layout -o, or its .json layout), run the randomisation again and report
"matches", or every unit whose recorded assignment differs. A blind workbook
needs its --key. Exit status 1 when the layout differs.` + "\n" + exitHelp,
		Example: `  allot layout verify trial.xlsx
  allot layout verify mice.xlsx --key trial-key.json`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("verify takes one FILE (a workbook or a layout .json), got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.file = args[0]
			if runF != nil {
				return runF(o)
			}
			return verifyRun(s, o)
		},
	}
	cmd.Flags().StringVar(&o.key, "key", "", "the unblinding key `FILE` of a blind layout")
	return cmd
}

func readKey(path string) (*design.Key, error) {
	if path == "" {
		return nil, nil
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--key %s: %w", path, err))
	}
	k, err := design.ParseKey(b)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--key %s: %w", path, err))
	}
	return &k, nil
}

func verifyRun(s *streams, o *verifyOptions) error {
	key, err := readKey(o.key)
	if err != nil {
		return err
	}
	var lay design.Layout
	switch strings.ToLower(filepath.Ext(o.file)) {
	case ".xlsx":
		if lay, err = workbook.ReadLayout(o.file, key); err != nil {
			return inputErr(err)
		}
	case ".json":
		b, err := os.ReadFile(o.file)
		if err != nil {
			return inputErr(err)
		}
		// Verify re-derives the assignment itself, so only the plan must be
		// sound here: a moved unit is what verify reports, not an error.
		var doc struct {
			Fingerprint string `json:"fingerprint"`
			design.Layout
		}
		if err := json.Unmarshal(b, &doc); err != nil {
			return inputErr(fmt.Errorf("%s: not a layout JSON file: %w", o.file, err))
		}
		if err := doc.Plan.Validate(); err != nil {
			return inputErr(fmt.Errorf("%s: the recorded plan is not valid: %w", o.file, err))
		}
		if doc.Fingerprint != doc.Plan.Fingerprint() {
			return inputErr(fmt.Errorf("%s: the plan does not match its fingerprint: the plan was edited", o.file))
		}
		lay = doc.Layout
	default:
		return usagef("%s: give a workbook (.xlsx) or a layout (.json)", o.file)
	}
	diffs, err := randomize.Verify(lay)
	if err != nil {
		return inputErr(fmt.Errorf("%s: %w", o.file, err))
	}
	if len(diffs) == 0 {
		fmt.Fprintf(s.Out, "%s: matches: all %d units are where plan %s with seed %d puts them (generator %s)\n",
			o.file, len(lay.Units), lay.Plan.Fingerprint()[:12], lay.Plan.Seed, lay.Plan.Generator)
		return nil
	}
	fmt.Fprintf(s.Out, "%s: %d unit(s) differ from the re-derived layout:\n", o.file, len(diffs))
	for _, d := range diffs {
		fmt.Fprintf(s.Out, "  unit %s: recorded %s; derived %s\n", d.Unit, d.Recorded, d.Derived)
	}
	return &failedError{err: fmt.Errorf("%s: the layout does not match its plan and seed", o.file)}
}
