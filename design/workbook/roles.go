package workbook

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/decimal"
)

// Roles names the columns of a plain CSV table (one that allot did not
// write): the response to analyse, the treatment factors and the block.
type Roles struct {
	Response string
	Factors  []string
	Block    string
	Unit     string // optional unit-ID column
}

// ReadRoles reads a plain CSV table with a header row and returns the
// observations of the response (rows with an empty response are skipped and
// counted in missing). A non-numeric response, or an empty factor or block
// cell, is an error naming its line and column.
func ReadRoles(r io.Reader, path string, roles Roles, decimalComma bool) (obs Observations, missing int, err error) {
	b, dialect, err := sniffCSV(r, path)
	if err != nil {
		return obs, 0, &design.CSVError{File: path, Msg: err.(*FileError).Msg}
	}
	cr := csv.NewReader(bytes.NewReader(b))
	cr.FieldsPerRecord = -1
	cr.Comma = dialect.sep
	head, err := cr.Read()
	if err != nil {
		return obs, 0, &design.CSVError{File: path, Msg: "no header row: " + err.Error()}
	}
	col := map[string]int{}
	for i, h := range head {
		col[strings.TrimSpace(h)] = i
	}
	find := func(flag, name string) (int, error) {
		i, ok := col[name]
		if !ok {
			return 0, &design.CSVError{File: path, Line: 1, Column: name, Msg: fmt.Sprintf("no such column for --%s (columns: %s)", flag, strings.Join(head, ", "))}
		}
		return i, nil
	}
	ri, err := find("response", roles.Response)
	if err != nil {
		return obs, 0, err
	}
	var fi []int
	for _, f := range roles.Factors {
		i, err := find("factor", f)
		if err != nil {
			return obs, 0, err
		}
		fi = append(fi, i)
	}
	bi, ui := -1, -1
	if roles.Block != "" {
		if bi, err = find("block", roles.Block); err != nil {
			return obs, 0, err
		}
	}
	if roles.Unit != "" {
		if ui, err = find("unit", roles.Unit); err != nil {
			return obs, 0, err
		}
	}
	obs.Levels = make([][]string, len(fi))
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return obs, 0, &design.CSVError{File: path, Msg: err.Error()}
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(head) {
			return obs, 0, &design.CSVError{File: path, Line: line, Msg: fmt.Sprintf("%d fields where the header has %d (the file is %s): a separator is missing or extra; correct the line", len(rec), len(head), dialect)}
		}
		get := func(i int) string {
			if i < len(rec) {
				return strings.TrimSpace(UnescapeCell(rec[i]))
			}
			return ""
		}
		v := get(ri)
		if v == "" {
			missing++
			continue
		}
		if t, ok := decimal.FromComma(v); ok && decimalComma {
			v = t
		}
		if err := decimal.Check(v); err != nil {
			msg := fmt.Sprintf("%q %v; correct it or leave it empty", v, err)
			if errors.Is(err, decimal.ErrComma) {
				msg = fmt.Sprintf("%q has a decimal comma; run again with --decimal-comma", v)
			}
			return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Response, Msg: msg}
		}
		for k, i := range fi {
			l := get(i)
			if l == "" {
				return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Factors[k], Msg: "the factor level is empty"}
			}
			obs.Levels[k] = append(obs.Levels[k], l)
		}
		if bi >= 0 {
			b := get(bi)
			if b == "" {
				return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Block, Msg: "the block is empty"}
			}
			obs.Blocks = append(obs.Blocks, b)
		}
		unit := fmt.Sprintf("line %d", line)
		if ui >= 0 {
			unit = get(ui)
		}
		obs.Values = append(obs.Values, v)
		obs.Units = append(obs.Units, unit)
		obs.Cells = append(obs.Cells, fmt.Sprintf("line %d", line))
	}
	if len(obs.Values) == 0 {
		return obs, missing, &design.CSVError{File: path, Column: roles.Response, Msg: "has no numbers to analyse"}
	}
	return obs, missing, nil
}
