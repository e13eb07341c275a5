package workbook

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"

	"github.com/allotproject/allot/column"
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
// cell, is an error naming its line and column; so is a line with more or
// fewer fields than the header. The dialect is detected as for ReadCSV (a
// byte-order mark, the separator from the header line, CR line ends), and
// a response is a number in the grammar of internal/decimal.
//
// The table is streamed: a million-row file is read without holding it
// whole, and without an allocation per row.
func ReadRoles(r io.Reader, path string, roles Roles, decimalComma bool) (obs Observations, missing int, err error) {
	src, dialect, err := sniffStream(r, path)
	if err != nil {
		return obs, 0, &design.CSVError{File: path, Msg: err.(*FileError).Msg}
	}
	rr := newRecordReader(src, byte(dialect.sep))
	first, _, err := rr.read()
	if err != nil {
		return obs, 0, &design.CSVError{File: path, Msg: "no header row: " + err.Error()}
	}
	var head []string
	for _, h := range first {
		head = append(head, string(h))
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
	// Level names and blocks are coded (each distinct name stored once);
	// values are kept as numbers when typed plainly, unit IDs packed end to
	// end; the line numbers are kept
	// as numbers and formatted only when a message names one. Rows cost no
	// allocation of their own, and messages are formatted only for an error.
	levels := make([]column.Coder, len(fi))
	var blocks column.Coder
	var values column.Decimals
	var units column.Packer
	var lines []uint32
	var fixed []byte
	rows := 0
	pr := pipeRecords(rr)
	defer pr.stop()
	for {
		rec, line, err := pr.next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return obs, 0, &design.CSVError{File: path, Msg: err.Error()}
		}
		if len(rec) != len(head) {
			return obs, 0, &design.CSVError{File: path, Line: line, Msg: fmt.Sprintf("%d fields where the header has %d (the file is %s): a separator is missing or extra; correct the line", len(rec), len(head), dialect)}
		}
		get := func(i int) []byte {
			if i < len(rec) {
				return trimSpace(unescapeBytes(rec[i]))
			}
			return nil
		}
		v := get(ri)
		if len(v) == 0 {
			missing++
			continue
		}
		if decimalComma && commaDecimal(v) {
			fixed = append(fixed[:0], v...)
			fixed[bytes.IndexByte(fixed, ',')] = '.'
			v = fixed
		}
		plain := values.AddPlain(v) // the usual number, kept as one
		if !plain && !plainDecimal(v) {
			// The common forms are checked above without allocating;
			// anything else goes through the one grammar.
			s := string(v)
			if err := decimal.Check(s); err != nil {
				msg := fmt.Sprintf("%q %v; correct it or leave it empty", s, err)
				if errors.Is(err, decimal.ErrComma) {
					msg = fmt.Sprintf("%q has a decimal comma; run again with --decimal-comma", s)
				}
				return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Response, Msg: msg}
			}
		}
		for k, i := range fi {
			l := get(i)
			if len(l) == 0 {
				return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Factors[k], Msg: "the factor level is empty"}
			}
			levels[k].Add(l)
		}
		if bi >= 0 {
			b := get(bi)
			if len(b) == 0 {
				return obs, 0, &design.CSVError{File: path, Line: line, Column: roles.Block, Msg: "the block is empty"}
			}
			blocks.Add(b)
		}
		if !plain {
			values.Add(v)
		}
		if line > math.MaxUint32 {
			return obs, 0, &design.CSVError{File: path, Line: line, Msg: "more lines than allot reads from one table (4,294,967,295); split the file"}
		}
		lines = append(lines, uint32(line))
		if ui >= 0 {
			units.Add(get(ui))
		}
		if rows++; rows == 1024 {
			// Size the columns from the bytes per row so far and the file
			// size, when the input is a file.
			if st, ok := r.(interface{ Stat() (os.FileInfo, error) }); ok {
				if info, err := st.Stat(); err == nil && pr.offset > 0 {
					est := min(int(float64(info.Size())/float64(pr.offset)*float64(pr.records)*1.05), 1<<26) - rows
					values.Grow(est, est*int(pr.offset)/pr.records)
					if ui >= 0 {
						units.Grow(est, est*units.Bytes()/rows)
					}
					for k := range levels {
						levels[k].Grow(est)
					}
					if bi >= 0 {
						blocks.Grow(est)
					}
					lines = slices.Grow(lines, est)
				}
			}
		}
	}
	for _, err := range []error{values.Err(), units.Err()} {
		if err != nil {
			return obs, 0, &design.CSVError{File: path, Msg: err.Error() + "; split the file"}
		}
	}
	obs.Values = values.Text()
	obs.Cells = column.Numbered("line ", slices.Clip(lines))
	obs.Levels = make([]column.Text, len(fi))
	for k := range levels {
		obs.Levels[k] = levels[k].Text()
	}
	if bi >= 0 {
		obs.Blocks = blocks.Text()
	}
	if ui >= 0 {
		obs.Units = units.Text()
	} else {
		// Without a unit column the line label is the unit's name too.
		obs.Units = obs.Cells
	}
	if obs.Values.Len() == 0 {
		return obs, missing, &design.CSVError{File: path, Column: roles.Response, Msg: "has no numbers to analyse"}
	}
	return obs, missing, nil
}

// unescapeBytes is UnescapeCell on bytes.
func unescapeBytes(v []byte) []byte {
	if len(v) > 1 && v[0] == '\'' && bytes.IndexByte([]byte("=+-@\t\r"), v[1]) >= 0 {
		return v[1:]
	}
	return v
}

// plainDecimal reports whether v is [sign]digits[.digits] with at least one
// digit and fewer than 300 characters: a number in internal/decimal's
// grammar that cannot overflow, so that the common case needs no further
// check.
func plainDecimal(v []byte) bool {
	if len(v) == 0 || len(v) >= 300 {
		return false
	}
	i := 0
	if v[0] == '+' || v[0] == '-' {
		i++
	}
	digits, dot := 0, false
	for ; i < len(v); i++ {
		switch c := v[i]; {
		case c >= '0' && c <= '9':
			digits++
		case c == '.' && !dot:
			dot = true
		default:
			return false
		}
	}
	return digits > 0
}

// commaDecimal reports whether v is [sign]digits,digits: a number written
// with a decimal comma, as decimal.FromComma takes it.
func commaDecimal(v []byte) bool {
	i := 0
	if len(v) > 0 && (v[0] == '+' || v[0] == '-') {
		i++
	}
	before, after, comma := 0, 0, false
	for ; i < len(v); i++ {
		switch c := v[i]; {
		case c >= '0' && c <= '9':
			if comma {
				after++
			} else {
				before++
			}
		case c == ',' && !comma:
			comma = true
		default:
			return false
		}
	}
	return comma && before > 0 && after > 0
}
