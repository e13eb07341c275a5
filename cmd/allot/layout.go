package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
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
	// secret, when set, replaces the blinding secret drawn from
	// crypto/rand (tests only).
	secret   []byte
	from     string
	fromPlan *report.SizePlan
	fromCmd  *cobra.Command
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

--design split-plot applies the whole-plot treatments (--whole-plot
NAME=L1,L2, repeatable for a factorial) to main plots called
--whole-plot-name (chamber, bench, cage), --reps R of each per block, either
completely randomised or within --blocks B, and the sub-plot treatments
(--sub-plot NAME=L1,L2, repeatable) to the sub-plots of each main plot, each
main plot on its own random stream. --design latin lays t treatments on a
t × t grid, each once in every row and column (--squares S for S
independent squares).

Units are numbered block × 100 + position (101, 102, …, 201, …) unless
--units FILE.csv lists them (an ID column, and for blocks either
--block-column litter, or --match-on weight to sort on a covariate and cut
into blocks of one unit per treatment).

Blocks of a unit list must be equal and a multiple of the number of
treatments, unless --per-block K takes K units of each block by a seeded
rule fixed before allocation (the rest are marked spare) or --allow-unequal
uses every unit. --expect-n N refuses a layout that uses another number of
units than the N justified (by allot size).

--blind shows codes instead of treatment names to the people who score
outcomes, in every output but the key, and writes the key (seed, secret and
codes; mode 0600) to --key FILE. --blind treatment (the default) gives one
code per treatment: units sharing a code share a treatment, so learning one
unit's treatment reveals all of its code. --blind unit gives every unit its
own code: learning one reveals no other, at the cost of a longer key. The
codes come from a 256-bit secret drawn from the system's random source and
kept only in the key; the allocation comes from the seed, so the seed of a
blind layout is a secret too: let allot draw it. allot unblind reveals the
map. --order adds a randomised measurement order within each block; --grid
ROWSxCOLS places each block on a grid numbered by --numbering
rows|serpentine; with more places than units, the units are spread over the
places at random.

-o FILE writes the data-entry workbook (.xlsx), a CSV of the same rows (.csv)
or the plan and assignment (.json). --spec FILE.toml reads everything from a
file (keys are these flag names, with _ for -); flags override it.` + "\n" + exitHelp,
		Example: `  # Four feeds on 5 benches, workbook for the technician
  allot layout --factor feed=F0,F1,F2,F3 --design rcbd --blocks 5 --block-name bench \
    --response height_cm:0..200 --seed 42 -o trial.xlsx

  # Animals blocked by litter from a list, 3 per litter (the rest spare),
  # blinded scoring with one code per animal, random measuring order
  allot layout --factor dose=0,10,30 --units mice.csv --id-column tag \
    --block-column litter --per-block 3 --expect-n 24 --blind unit \
    --key trial-key.json --order -o mice.xlsx

  # Reveal the codes after scoring, with a record of when and which key
  allot unblind mice-filled.xlsx --key trial-key.json

  # Re-derive a layout from its workbook
  allot layout verify trial.xlsx`,
		Args: func(c *cobra.Command, args []string) error {
			// "--blind unit": the flag's optional value parsed as an argument.
			if len(args) == 1 && c.Flags().Changed("blind") {
				if args[0] == design.BlindUnit || args[0] == design.BlindTreatment {
					return nil
				}
				return usagef("--blind %s: give --blind treatment (one code per treatment, the default) or --blind unit (one code per unit)", args[0])
			}
			if len(args) > 0 {
				return usagef("layout takes no arguments, got %q (did you mean allot layout verify?)", strings.Join(args, " "))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			if len(args) == 1 {
				o.spec.Blind = design.BlindChoice(args[0])
			}
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
	f.StringVar(&o.spec.Design, "design", "", "`crd` (completely randomised, the default), rcbd (randomised complete blocks), split-plot or latin")
	f.StringArrayVar(&o.spec.Factor, "factor", nil, "treatment factor `NAME=L1,L2,...`; repeat for a factorial (2–4 factors)")
	f.StringVar(&o.spec.Control, "control", "", "the control `LEVEL` (one-factor plans)")
	f.StringVar(&o.spec.Reps, "reps", "", "replication `R` (per block for rcbd), or TREATMENT=R,...,default=R")
	f.IntVar(&o.spec.Blocks, "blocks", 0, "number of blocks `B` (implies --design rcbd)")
	f.StringVar(&o.spec.BlockName, "block-name", "", "what a block is called: `NAME` such as bench, litter, day, rack (default block)")
	f.StringArrayVar(&o.spec.Response, "response", nil, "a response to record, `NAME[:MIN..MAX]` (or NAME:count, NAME:proportion/of=N, NAME:score/MIN..MAX); repeat for several")
	f.StringArrayVar(&o.spec.Covariate, "covariate", nil, "a baseline measurement taken before treatment, `NAME[:MIN..MAX]` (start weight), recorded before the responses and adjusted for by allot analyze; repeatable")
	f.StringVar(&o.spec.Times, "times", "", "measure each response at these times, `T1,T2,...` (days 0,7,14 or labels); one column per response and time")
	f.StringVar(&o.seed, "seed", "", "random seed, an unsigned 64-bit `N`; without it one is drawn and printed")
	f.StringVar(&o.spec.Units, "units", "", "unit list `FILE.csv` with a header row")
	f.StringVar(&o.spec.IDColumn, "id-column", "", "unit-list column holding the unit `ID` (default id)")
	f.StringVar(&o.spec.BlockColumn, "block-column", "", "unit-list `COLUMN` that gives each unit's block (litter)")
	f.StringVar(&o.spec.MatchOn, "match-on", "", "unit-list `COLUMN` to sort on and cut into matched blocks (weight)")
	f.StringVar(&o.spec.Grid, "grid", "", "place each block on a grid of `ROWSxCOLS`")
	f.StringVar(&o.spec.Numbering, "numbering", "", "grid numbering: `rows` or serpentine")
	f.Var(&o.spec.Blind, "blind", "show codes instead of treatment names: `MODE` treatment (one code per treatment, the default) or unit (one per unit); write the key to --key")
	f.Lookup("blind").NoOptDefVal = design.BlindTreatment
	f.IntVar(&o.spec.PerBlock, "per-block", 0, "take `K` units of each block of the unit list at random; mark the rest spare")
	f.BoolVar(&o.spec.AllowUnequal, "allow-unequal", false, "use every unit of a unit list whose blocks differ in size")
	f.IntVar(&o.spec.ExpectN, "expect-n", 0, "refuse a layout that does not use exactly `N` units (the number justified)")
	f.StringVar(&o.key, "key", "", "write the blinding key to `FILE` (with --blind)")
	f.BoolVar(&o.spec.Order, "order", false, "add a randomised measurement order within each block")
	f.IntVar(&o.spec.Subsamples, "subsamples", 0, "record `N` measurements per unit, one row each (averaged to the unit for analysis)")
	addStrataFlags(f, &o.spec)
	f.StringVarP(&o.out, "out", "o", "", "write the layout to `FILE` (.xlsx workbook, .csv or .json)")
	f.StringVar(&o.mapFile, "map", "", "draw the printable bench map to `FILE.pdf` (all pages), or .svg/.png (one file per page: FILE-1.png, …)")
	f.StringVar(&o.paper, "paper", "a4", "paper the workbook and map are set up to print on: `a4` or letter")
	f.BoolVar(&o.json, "json", false, "print the resolved plan and assignment as JSON")
	f.BoolVar(&o.force, "force", false, "replace existing output files")
	f.StringVar(&o.from, "from", "", "take treatments, replication, blocks and response from `FILE.json` written by allot size -o")
	cmd.AddCommand(newVerifyCmd(s, nil))
	return cmd
}

// resolveSpec merges the spec file and the flags that were set.
func (o *layoutOptions) resolveSpec(c *cobra.Command) error {
	for _, f := range []struct{ name, value string }{{"out", o.out}, {"map", o.mapFile}, {"key", o.key}} {
		if c.Flags().Changed(f.name) && strings.TrimSpace(f.value) == "" {
			flag := "--" + f.name
			if f.name == "out" {
				flag = "-o"
			}
			return usagef("%s '': give a file name, or leave %s out", flag, flag)
		}
	}
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
		if changed("covariate") {
			sp.Covariate = flags.Covariate
		}
		set("times", &sp.Times, flags.Times)
		if changed("blocks") {
			sp.Blocks = flags.Blocks
		}
		if changed("blind") {
			sp.Blind = flags.Blind
		}
		if changed("order") {
			sp.Order = flags.Order
		}
		if changed("per-block") {
			sp.PerBlock = flags.PerBlock
		}
		if changed("allow-unequal") {
			sp.AllowUnequal = flags.AllowUnequal
		}
		if changed("expect-n") {
			sp.ExpectN = flags.ExpectN
		}
		if changed("subsamples") {
			sp.Subsamples = flags.Subsamples
		}
		mergeStrataFlags(changed, &sp, flags)
		o.spec = sp
	}
	if o.from != "" {
		p, err := o.applyFrom(c)
		if err != nil {
			return err
		}
		o.fromPlan = p
		o.fromCmd = c
	}
	if o.seed != "" {
		v, err := design.ParseSeed(o.seed)
		if err != nil {
			return usagef("--seed %s: must be an unsigned whole number below 2^64, for example --seed 20261201", o.seed)
		}
		sv := design.SeedText(v)
		o.spec.Seed = &sv
	}
	if o.spec.IDColumn == "" {
		o.spec.IDColumn = "id"
	}
	if o.spec.Blind != "" && o.key == "" {
		return usagef("--blind: give --key FILE for the unblinding key, and keep that file from the people who score outcomes")
	}
	if o.spec.Blind == "" && o.key != "" {
		return usagef("--key %s: a key is written only for a --blind layout", o.key)
	}
	if err := distinctOutputs([][2]string{{"-o", o.out}, {"--map", o.mapFile}, {"--key", o.key}}); err != nil {
		return err
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
			"block_name": "block-name", "response": "response", "covariate": "covariate", "times": "times", "design": "design", "units": "units", "grid": "grid", "seed": "seed", "subsamples": "subsamples",
			"per_block": "per-block", "expect_n": "expect-n", "blind": "blind", "title": "title"}[de.Field]
		if flag == "" {
			flag = strings.ReplaceAll(de.Field, "_", "-")
		}
		return inputErr(fmt.Errorf("--%s: %s", flag, de.Msg))
	}
	var ue *design.CSVError
	if errors.As(err, &ue) {
		return inputErr(fmt.Errorf("--units %w", err))
	}
	return inputErr(err)
}

// distinctOutputs refuses two outputs at the same path (a key written over
// the workbook would leave neither).
func distinctOutputs(outs [][2]string) error {
	seen := map[string]string{}
	for _, o := range outs {
		if o[1] == "" {
			continue
		}
		abs, err := filepath.Abs(o[1])
		if err != nil {
			abs = filepath.Clean(o[1])
		}
		if prev, dup := seen[abs]; dup {
			return usagef("%s %s: the same file as %s; give each output its own file", o[0], o[1], prev)
		}
		seen[abs] = o[0]
	}
	return nil
}

// checkOutputs checks every output path before any is written: its folder
// exists and, without --force, the file does not.
func checkLayoutOutputs(force bool, outs [][2]string) error {
	for _, o := range outs {
		if o[1] == "" {
			continue
		}
		if st, err := os.Stat(filepath.Dir(o[1])); err != nil || !st.IsDir() {
			return inputErr(fmt.Errorf("%s %s: the folder %s does not exist; create it or choose another", o[0], o[1], filepath.Dir(o[1])))
		}
		if _, err := os.Stat(o[1]); err == nil && !force {
			return inputErr(fmt.Errorf("%s %s: %w: %s already exists; choose another name or add --force to replace it", o[0], o[1], atomicfile.ErrExists, o[1]))
		}
	}
	return nil
}

func layoutRun(s *streams, o *layoutOptions) error {
	outs := [][2]string{{"--key", o.key}, {"-o", o.out}, {"--map", o.mapFile}}
	if err := checkLayoutOutputs(o.force, outs); err != nil {
		return err
	}
	blind := o.spec.Blind != ""
	if o.spec.Seed != nil && blind {
		fmt.Fprintf(s.Err, "allot layout: warning: --seed with --blind: anyone who knows or guesses this seed can re-derive the allocation from the workbook's unit IDs (and, with one code per treatment, the meaning of every code); leave --seed out to let allot draw one, kept in the key file only\n")
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
	if o.spec.Seed == nil {
		// Name missing or wrong inputs before drawing a seed: the seed
		// does not change what is valid.
		probe, zero := o.spec, design.SeedText(0)
		probe.Seed = &zero
		if _, err := probe.Resolve(units); err != nil {
			return planError(err)
		}
		seed, err := randomize.NewSeed()
		if err != nil {
			return err
		}
		sv := design.SeedText(seed)
		o.spec.Seed = &sv
		if blind {
			fmt.Fprintf(s.Err, "allot layout: drew a seed from the system's random source; it is kept in the key file only\n")
		} else {
			fmt.Fprintf(s.Err, "allot layout: no --seed given; drew seed %d (recorded in the plan; give --seed %d to repeat this layout)\n", seed, seed)
		}
	}
	plan, err := o.spec.Resolve(units)
	if err != nil {
		return planError(err)
	}
	var lay design.Layout
	if o.secret != nil {
		lay, err = randomize.AssignSecret(plan, o.secret)
	} else {
		lay, err = randomize.Assign(plan)
	}
	if err != nil {
		return planError(err)
	}
	if o.fromPlan != nil {
		fromNote(s.Err, o.from, o.fromPlan, len(lay.Units), o.fromCmd)
	}
	// The key goes first: a blind workbook is never written without it.
	// Everything else sees the sealed layout only.
	if plan.Blind {
		key := design.KeyOf(lay)
		if err := atomicfile.Write(o.key, o.force, func(w io.Writer) error { return design.WriteKey(w, key) }, atomicfile.Private()); err != nil {
			return inputErr(fmt.Errorf("--key %s: %w", o.key, err))
		}
	}
	shown := lay.Sealed()
	if err := writeOutputs(s, o, shown); err != nil {
		if plan.Blind && !o.force {
			os.Remove(o.key) // it did not exist before: leave no key without its workbook
		}
		return err
	}
	if plan.Blind {
		fmt.Fprintf(s.Err, "allot layout: wrote the unblinding key to %s (readable by you only); keep it from the people who score outcomes\n", o.key)
	}
	if o.json {
		return report.LayoutJSON(s.Out, shown)
	}
	return report.LayoutText(s.Out, shown)
}

// writeOutputs writes -o and --map.
func writeOutputs(s *streams, o *layoutOptions, lay design.Layout) error {
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
	return nil
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
"matches", or every unit whose recorded assignment differs (moved, missing,
listed twice, spare) and, for a workbook, every visible design cell (unit,
block, position, row, column, treatment or code) edited since it was
written, by sheet and cell. A blind layout needs its --key to re-derive the
allocation; without it only the visible cells of a workbook are checked.
Exit status 1 when the layout differs.` + "\n" + exitHelp,
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
	var visible []workbook.Problem
	switch strings.ToLower(filepath.Ext(o.file)) {
	case ".xlsx":
		fl, err := workbook.Read(o.file, workbook.ReadOptions{Key: key})
		if err != nil {
			return inputErr(err)
		}
		if fl.Sealed {
			if d := fl.DesignProblems(); len(d) > 0 {
				printVisible(s, o.file, d)
				return &failedError{err: fmt.Errorf("%s: visible design cells were edited (give --key to re-derive the allocation as well)", o.file)}
			}
			return inputErr(fmt.Errorf("%s: the workbook is blind: its visible design cells agree with the recorded layout; give its key file with --key to re-derive the allocation", o.file))
		}
		lay, visible = fl.Layout, fl.DesignProblems()
	case ".json":
		b, err := os.ReadFile(o.file)
		if err != nil {
			return inputErr(err)
		}
		// Verify re-derives the assignment itself, so only the plan must be
		// sound here: a moved unit is what verify reports, not an error.
		if lay, err = design.DecodeLayout(b); err != nil {
			return inputErr(fmt.Errorf("%s: %w", o.file, err))
		}
		if lay.Plan.Blind {
			if key == nil {
				return inputErr(fmt.Errorf("%s: the layout is blind: give its key file with --key to re-derive it", o.file))
			}
			if lay, err = randomize.Unblind(lay, *key); err != nil {
				return inputErr(fmt.Errorf("--key %s: %w", o.key, err))
			}
		}
	default:
		return usagef("%s: give a workbook (.xlsx) or a layout (.json)", o.file)
	}
	diffs, err := randomize.Verify(lay)
	if err != nil {
		return inputErr(fmt.Errorf("%s: %w", o.file, err))
	}
	if len(diffs) == 0 && len(visible) == 0 {
		seed := fmt.Sprintf("seed %d", lay.Plan.Seed)
		if lay.Plan.Blind {
			seed = "the key's seed and secret"
		}
		fmt.Fprintf(s.Out, "%s: matches: all %d units are where plan %s with %s puts them (generator %s)", o.file, len(lay.Units), lay.Plan.Fingerprint()[:12], seed, lay.Plan.Generator)
		if strings.EqualFold(filepath.Ext(o.file), ".xlsx") {
			fmt.Fprint(s.Out, ", and every visible design cell agrees")
		}
		fmt.Fprintln(s.Out)
		return nil
	}
	if len(diffs) > 0 {
		fmt.Fprintf(s.Out, "%s: %d unit(s) differ from the re-derived layout:\n", o.file, len(diffs))
		for _, d := range diffs {
			fmt.Fprintf(s.Out, "  unit %s: recorded %s; derived %s\n", d.Unit, d.Recorded, d.Derived)
		}
	}
	printVisible(s, o.file, visible)
	return &failedError{err: fmt.Errorf("%s: the layout does not match its plan and seed", o.file)}
}

func printVisible(s *streams, file string, visible []workbook.Problem) {
	if len(visible) == 0 {
		return
	}
	fmt.Fprintf(s.Out, "%s: %d visible design cell(s) or row(s) differ from the recorded layout:\n", file, len(visible))
	for _, p := range visible {
		fmt.Fprintf(s.Out, "  %s\n", p)
	}
}
