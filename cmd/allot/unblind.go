package main

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/randomize"

	"github.com/spf13/cobra"
)

type unblindOptions struct {
	file  string
	key   string
	out   string
	json  bool
	force bool
	now   func() time.Time
}

func newUnblindCmd(s *streams, runF func(*unblindOptions) error) *cobra.Command {
	o := &unblindOptions{now: time.Now}
	cmd := &cobra.Command{
		Use:   "unblind FILE --key KEY",
		Short: "Reveal what the blind codes of a layout stand for, and record when and with which key",
		Long: `Check the key against the blind workbook (or sealed layout .json) FILE — the
key's plan, its check under its secret, and the codes its seed and secret
re-derive for every unit — and print what each code stands for: one line per
code (one code per treatment) or per unit (one code per unit).

The output starts with the unblinding record: when (UTC), with which key
file and the SHA-256 of the key's content, for which plan. Keep it with the
study's records; unblinding is meant to happen once, after the outcomes are
scored. -o FILE.json (or .txt) writes the same to a file; --json prints JSON.

allot check and allot analyze take --key too, to read a blind workbook for
analysis; this command is the one that shows the map itself.` + "\n" + exitHelp,
		Example: `  allot unblind mice-filled.xlsx --key trial-key.json
  allot unblind mice-filled.xlsx --key trial-key.json -o unblinding.json`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("unblind takes one FILE (a blind workbook or layout .json), got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.file = args[0]
			if o.key == "" {
				return usagef("--key: give the key file written by allot layout --blind")
			}
			switch strings.ToLower(filepath.Ext(o.out)) {
			case "", ".json", ".txt":
			default:
				return usagef("-o %s: the file name must end in .json or .txt", o.out)
			}
			if err := distinctOutputs([][2]string{{"-o", o.out}, {"--key", o.key}, {"FILE", o.file}}); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return unblindRun(s, o)
		},
	}
	f := cmd.Flags()
	f.StringVar(&o.key, "key", "", "the unblinding key `FILE` (allot layout --key)")
	f.StringVarP(&o.out, "out", "o", "", "also write the record and map to `FILE` (.json or .txt)")
	f.BoolVar(&o.json, "json", false, "print the record and map as JSON")
	f.BoolVar(&o.force, "force", false, "replace an existing -o file")
	return cmd
}

// unblinding is the record and the map.
type unblinding struct {
	Format      string        `json:"format"` // "allot.unblinding/v1"
	When        string        `json:"unblinded_at"`
	File        string        `json:"file"`
	KeyFile     string        `json:"key_file"`
	KeySHA256   string        `json:"key_sha256"`
	Fingerprint string        `json:"plan_fingerprint"`
	Title       string        `json:"title"`
	Mode        string        `json:"blind_mode"`
	Codes       []codeMeaning `json:"codes,omitempty"`
	Units       []unitMeaning `json:"units,omitempty"`
}

type codeMeaning struct {
	Code      string `json:"code"`
	Treatment string `json:"treatment"`
	Units     int    `json:"units"`
}

type unitMeaning struct {
	ID        string `json:"unit"`
	Block     string `json:"block"`
	Code      string `json:"code"`
	Treatment string `json:"treatment"`
}

func unblindRun(s *streams, o *unblindOptions) error {
	if err := checkLayoutOutputs(o.force, [][2]string{{"-o", o.out}}); err != nil {
		return err
	}
	raw, err := os.ReadFile(o.key)
	if err != nil {
		return inputErr(fmt.Errorf("--key %s: %w", o.key, err))
	}
	key, err := design.ParseKey(raw)
	if err != nil {
		return inputErr(fmt.Errorf("--key %s: %w", o.key, err))
	}
	var lay design.Layout
	switch strings.ToLower(filepath.Ext(o.file)) {
	case ".xlsx":
		if lay, err = workbook.ReadLayout(o.file, &key); err != nil {
			return inputErr(err)
		}
	case ".json":
		b, err := os.ReadFile(o.file)
		if err != nil {
			return inputErr(err)
		}
		sealed, err := design.ParseLayout(b)
		if err != nil {
			return inputErr(fmt.Errorf("%s: %w", o.file, err))
		}
		if lay, err = randomize.Unblind(sealed, key); err != nil {
			return inputErr(fmt.Errorf("--key %s: %w", o.key, err))
		}
	default:
		return usagef("%s: give a blind workbook (.xlsx) or its layout (.json)", o.file)
	}
	sum := sha256.Sum256(raw)
	u := unblinding{Format: "allot.unblinding/v1", When: o.now().UTC().Format(time.RFC3339), File: o.file, KeyFile: o.key,
		KeySHA256: hex.EncodeToString(sum[:]), Fingerprint: lay.Plan.Fingerprint(), Title: lay.Plan.Title, Mode: lay.Plan.BlindMode}
	if u.Mode == "" {
		u.Mode = design.BlindTreatment
	}
	tr := lay.Plan.Treatments()
	if lay.Plan.BlindMode == design.BlindUnit {
		labels := lay.Plan.BlockLabels()
		for _, un := range lay.Units {
			u.Units = append(u.Units, unitMeaning{ID: un.ID, Block: labels[un.Block-1], Code: lay.Label(un), Treatment: tr[un.Treatment].Name})
		}
	} else {
		n := make([]int, len(tr))
		for _, un := range lay.Units {
			n[un.Treatment]++
		}
		for t, c := range lay.Codes {
			u.Codes = append(u.Codes, codeMeaning{Code: c, Treatment: tr[t].Name, Units: n[t]})
		}
	}
	text := unblindText(u, lay.Plan.BlockName)
	if o.out != "" {
		err := atomicfile.Write(o.out, o.force, func(w io.Writer) error {
			if strings.EqualFold(filepath.Ext(o.out), ".json") {
				return writeUnblindJSON(w, u)
			}
			_, err := io.WriteString(w, text)
			return err
		})
		if err != nil {
			return inputErr(err)
		}
		fmt.Fprintf(s.Err, "allot unblind: wrote %s\n", o.out)
	}
	if o.json {
		return writeUnblindJSON(s.Out, u)
	}
	_, err = io.WriteString(s.Out, text)
	return err
}

func writeUnblindJSON(w io.Writer, u unblinding) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(u)
}

func unblindText(u unblinding, blockName string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "Unblinded: %s\n", u.Title)
	for _, r := range [][2]string{
		{"when", u.When + " (UTC)"},
		{"file", u.File},
		{"key", fmt.Sprintf("%s (SHA-256 %s)", u.KeyFile, u.KeySHA256)},
		{"plan", u.Fingerprint},
		{"blinding", "one code per " + u.Mode},
	} {
		fmt.Fprintf(&b, "  %-9s %s\n", r[0], r[1])
	}
	if u.Units != nil {
		fmt.Fprintf(&b, "\nEach unit's code and treatment\n")
		w := max(len("unit"), len(blockName))
		for _, x := range u.Units {
			w = max(w, len(x.ID), len(x.Block))
		}
		fmt.Fprintf(&b, "  %-*s  %-*s  %-6s  %s\n", w, "unit", w, blockName, "code", "treatment")
		for _, x := range u.Units {
			fmt.Fprintf(&b, "  %-*s  %-*s  %-6s  %s\n", w, x.ID, w, x.Block, x.Code, x.Treatment)
		}
		return b.String()
	}
	b.WriteString("\nWhat each code stands for\n")
	fmt.Fprintf(&b, "  %-6s  %5s  %s\n", "code", "units", "treatment")
	for _, c := range u.Codes {
		fmt.Fprintf(&b, "  %-6s  %5d  %s\n", c.Code, c.Units, c.Treatment)
	}
	return b.String()
}
