package workbook

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/atomicfile"

	"github.com/xuri/excelize/v2"
)

// Fill copies the workbook src to dst with response values written in, as a
// technician would type them. values[r][i] is response r of
// layout unit i (NaN leaves the cell empty). label is written in red at the
// top of the Study sheet and into every Notes cell, so that simulated numbers
// can never pass for measurements. dst is written through a temporary file
// and is not replaced unless force is set.
func Fill(src, dst string, values [][]float64, label string, force bool) error {
	f, err := excelize.OpenFile(src, excelize.Options{RawCellValue: true, UnzipSizeLimit: UnzipSizeLimit, UnzipXMLSizeLimit: UnzipXMLSizeLimit})
	if err != nil {
		return fmt.Errorf("%s: cannot be opened as an .xlsx workbook: %w", src, err)
	}
	defer f.Close()
	ds, err := readData(f, src, ReadOptions{})
	if err != nil {
		return err
	}
	l := ds.layout
	p := l.Plan
	if len(p.Responses) == 0 {
		return ErrNotFilled
	}
	if len(values) != len(p.Responses) {
		return fmt.Errorf("workbook: %d value columns for %d responses", len(values), len(p.Responses))
	}
	c := layoutColumns(p)
	nd := c.designCount(p)
	rows, err := f.GetRows(SheetEntry, excelize.Options{RawCellValue: true})
	if err != nil {
		return err
	}
	if c.subsamples > 0 {
		return fmt.Errorf("workbook: Fill writes one value per unit; this plan has %d subsamples per unit", c.subsamples)
	}
	rowOf := map[string]int{}
	for r := 1; r < len(rows); r++ {
		if len(rows[r]) > 0 {
			rowOf[strings.TrimSpace(rows[r][0])] = r + 1
		}
	}
	notes := len(c.headers(p))
	for i, u := range l.Units {
		row, ok := rowOf[u.ID]
		if !ok {
			return fmt.Errorf("%s: unit %s has no row on sheet %q", src, u.ID, SheetEntry)
		}
		for k := range p.Responses {
			v := values[k][i]
			if v != v { // NaN: leave empty
				continue
			}
			if err := f.SetCellFloat(SheetEntry, cell(nd+1+k, row), v, -1, 64); err != nil {
				return err
			}
		}
		if label != "" {
			if err := f.SetCellStr(SheetEntry, cell(notes, row), label); err != nil {
				return err
			}
		}
	}
	if label != "" {
		red, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true, Color: "B00020", Size: 12}})
		if err != nil {
			return err
		}
		if err := f.SetCellStr(SheetStudy, "A2", label); err != nil {
			return err
		}
		if err := f.SetCellStyle(SheetStudy, "A2", "A2", red); err != nil {
			return err
		}
		// The notice goes into the checksummed plan data as well, where
		// clearing the visible one cannot remove it.
		st := ds.st
		st.Simulated = label
		doc, err := json.Marshal(st)
		if err != nil {
			return err
		}
		// B1 stays as it was (a blind plan's, which a key must match).
		if err := putDoc(f, ds.fp, doc, ds.chunks); err != nil {
			return err
		}
	}
	return atomicfile.Write(dst, force, func(w io.Writer) error {
		if _, err := f.WriteTo(w); err != nil {
			return fmt.Errorf("writing %s: %w", dst, err)
		}
		return nil
	})
}

// Observations holds the observations of one response for analysis: the decimal
// texts of the units that have a value, with their treatment levels, block,
// unit IDs and cells.
type Observations struct {
	Values column.Text
	// Subsamples holds each observation's subsample values (decimal text)
	// when the plan has subsamples; Values is then empty.
	Subsamples [][]string
	Levels     []column.Text // per factor, one level per observation
	Blocks     column.Text   // block label, per observation (empty for CRD)
	Units      column.Text
	Cells      column.Text // where each value is: "Entry!F7", "line 12"
	// Losses lists the units the Status column marks lost or excluded, in
	// layout order: they are not among the observations above.
	Losses []Loss
}

// Loss is a unit marked lost or excluded on the Entry sheet.
type Loss struct {
	Unit      string
	Treatment string   // treatment name
	Levels    []string // its level of each factor
	Block     string   // block label (RCBD), or empty
	Status    string   // StatusLost or StatusExcluded
	Reason    string
	Cell      string // the Status cell, "Entry!H7"
	// Value is the response's value of an excluded unit, if one was
	// entered (decimal text), else empty.
	Value string
}

// Observations collects the non-missing values of response r. It panics on
// a sealed (blind, unkeyed) workbook; check Filled.Sealed first.
func (fl *Filled) Observations(r int) Observations {
	if fl.Sealed {
		panic("workbook: Observations of a blind workbook read without its key")
	}
	p := fl.Layout.Plan
	tr := p.Treatments()
	o := Observations{Levels: make([]column.Text, len(p.Factors))}
	var values, blocks, units, cells []string
	levels := make([][]string, len(p.Factors))
	for i, u := range fl.Layout.Units {
		v := fl.Values[r][i]
		if i < len(fl.Status) && fl.Status[i].Dropped() {
			loss := Loss{Unit: u.ID, Treatment: tr[u.Treatment].Name, Levels: tr[u.Treatment].Levels,
				Status: fl.Status[i].Status, Reason: fl.Status[i].Reason, Cell: fl.Status[i].Cell, Value: v.Text}
			if p.Design == design.RCBD {
				loss.Block = p.BlockLabel(u.Block)
			}
			o.Losses = append(o.Losses, loss)
			continue
		}
		if v.Missing {
			continue
		}
		if fl.Subs != nil {
			var subs []string
			for _, sv := range fl.Subs[r][i] {
				if !sv.Missing {
					subs = append(subs, sv.Text)
				}
			}
			o.Subsamples = append(o.Subsamples, subs)
			v.Cell = fl.Subs[r][i][0].Cell
		} else {
			values = append(values, v.Text)
		}
		for fi := range p.Factors {
			levels[fi] = append(levels[fi], tr[u.Treatment].Levels[fi])
		}
		if p.Design == design.RCBD {
			blocks = append(blocks, p.BlockLabel(u.Block))
		}
		units = append(units, u.ID)
		cells = append(cells, SheetEntry+"!"+v.Cell)
	}
	o.Values, o.Blocks, o.Units, o.Cells = column.Of(values), column.Code(blocks), column.Of(units), column.Of(cells)
	for fi, l := range levels {
		o.Levels[fi] = column.Code(l)
	}
	return o
}
