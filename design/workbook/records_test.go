package workbook

import (
	"encoding/csv"
	"io"
	"reflect"
	"strings"
	"testing"
)

// readAllRecords reads every record with recordReader, as strings.
func readAllRecords(s string) ([][]string, []int, error) {
	rr := newRecordReader(strings.NewReader(s), ',')
	var out [][]string
	var lines []int
	for {
		f, line, err := rr.read()
		if err == io.EOF {
			return out, lines, nil
		}
		if err != nil {
			return out, lines, err
		}
		var rec []string
		for _, b := range f {
			rec = append(rec, string(b))
		}
		out = append(out, rec)
		lines = append(lines, line)
	}
}

// csvRecords reads s with encoding/csv, the reference behaviour.
func csvRecords(s string) ([][]string, []int, error) {
	cr := csv.NewReader(strings.NewReader(s))
	cr.FieldsPerRecord = -1
	var out [][]string
	var lines []int
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return out, lines, nil
		}
		if err != nil {
			return out, lines, err
		}
		l, _ := cr.FieldPos(0)
		out = append(out, rec)
		lines = append(lines, l)
	}
}

func TestRecordReader(t *testing.T) {
	for _, tt := range []struct {
		name, in string
		bad      bool
	}{
		{"plain", "a,b,c\n1,2,3\n", false},
		{"no final newline", "a,b\n1,2", false},
		{"crlf", "a,b\r\n1,2\r\n", false},
		{"empty lines", "a,b\n\n1,2\n\r\n3,4\n", false},
		{"empty fields", ",,\n,a,\n", false},
		{"quoted comma", "a,\"x,y\",c\n", false},
		{"doubled quote", "\"he said \"\"hi\"\"\",2\n", false},
		{"quoted line break", "a,\"two\nlines\",c\nd,e,f\n", false},
		{"quoted crlf break", "a,\"two\r\nlines\"\r\nd\r\n", false},
		{"quoted empty", "\"\",\"\"\n", false},
		{"quoted last then comma", "\"a\",\n", false},
		{"long line", strings.Repeat("x", 200000) + ",y\n", false},
		{"bare quote", "a,b\"c\n", true},
		{"text after quote", "\"a\"b,c\n", true},
		{"unterminated", "a,\"open\n", true},
	} {
		t.Run(tt.name, func(t *testing.T) {
			got, gl, gerr := readAllRecords(tt.in)
			want, wl, werr := csvRecords(tt.in)
			if (gerr != nil) != (werr != nil) || (gerr != nil) != tt.bad {
				t.Fatalf("error %v, encoding/csv %v", gerr, werr)
			}
			if gerr == nil && (!reflect.DeepEqual(got, want) || !reflect.DeepEqual(gl, wl)) {
				t.Errorf("records %q lines %v, encoding/csv %q lines %v", got, gl, want, wl)
			}
		})
	}
}

// FuzzRecordReader checks recordReader against encoding/csv: the same
// records and starting lines, or an error from both.
func FuzzRecordReader(f *testing.F) {
	for _, s := range []string{"a,b\n1,2\n", "\"x\"\"y\",\"a\nb\"\r\n", ",\n\n,,", "\"a\"b", "a\"b"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, gl, gerr := readAllRecords(s)
		want, wl, werr := csvRecords(s)
		if (gerr != nil) != (werr != nil) {
			t.Fatalf("%q: error %v, encoding/csv %v", s, gerr, werr)
		}
		if gerr == nil && (!reflect.DeepEqual(got, want) || !reflect.DeepEqual(gl, wl)) {
			t.Fatalf("%q: records %q lines %v, encoding/csv %q lines %v", s, got, gl, want, wl)
		}
	})
}
