package workbook

import (
	"errors"
	"io"
	"reflect"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
)

// TestReadRolesDialects: the streamed plain-CSV reader takes the dialects
// spreadsheet programs write (as ReadCSV does), refuses a ragged line by
// its number, and reads a response in the one decimal grammar.
func TestReadRolesDialects(t *testing.T) {
	roles := Roles{Response: "y", Factors: []string{"diet"}, Block: "rack"}
	want := struct{ Values, Levels, Blocks []string }{[]string{"1.5", "2"}, []string{"a", "b"}, []string{"1", "2"}}
	ok := []struct {
		name, in string
		comma    bool
		values   []string
	}{
		{"comma, LF", "diet,rack,y\na,1,1.5\nb,2,2\n", false, nil},
		{"CRLF", "diet,rack,y\r\na,1,1.5\r\nb,2,2\r\n", false, nil},
		{"CR only", "diet,rack,y\ra,1,1.5\rb,2,2\r", false, nil},
		{"BOM, semicolon, decimal comma", "\xEF\xBB\xBFdiet;rack;y\na;1;1,5\nb;2;2\n", true, nil},
		{"tab", "diet\track\ty\na\t1\t1.5\nb\t2\t2\n", false, nil},
		{"quoted level, empty line", "diet,rack,y\n\"a\",1,1.5\n\nb,2,2\n", false, nil},
		{"exponent, spaces, escaped sign", "diet,rack,y\na,1, 0.15e1 \nb,2,'+2\n", false, []string{"0.15e1", "+2"}},
	}
	for _, tc := range ok {
		obs, missing, err := ReadRoles(strings.NewReader(tc.in), "t.csv", roles, tc.comma)
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		w := want.Values
		if tc.values != nil {
			w = tc.values
		}
		if missing != 0 || !reflect.DeepEqual(obs.Values.Strings(), w) || len(obs.Levels) != 1 || !reflect.DeepEqual(obs.Levels[0].Strings(), want.Levels) || !reflect.DeepEqual(obs.Blocks.Strings(), want.Blocks) {
			t.Errorf("%s: values %q levels %q blocks %q missing %d", tc.name, obs.Values, obs.Levels, obs.Blocks, missing)
		}
	}
	bad := []struct {
		name, in string
		comma    bool
		line     int
		msg      string
	}{
		{"ragged line", "diet,rack,y\na,1,1.5\nb,2\n", false, 3, "2 fields where the header has 3 (the file is comma-separated)"},
		{"ragged, semicolons", "\xEF\xBB\xBFdiet;rack;y\na;1;1,5;x\n", true, 2, "the file is semicolon-separated, with a UTF-8 byte-order mark"},
		{"decimal comma without the flag", "diet;rack;y\na;1;1,5\n", false, 2, "run again with --decimal-comma"},
		{"NaN", "diet,rack,y\na,1,NaN\n", false, 2, "is NaN"},
		{"hexadecimal", "diet,rack,y\na,1,0x1p3\n", false, 2, "hexadecimal"},
		{"underscore", "diet,rack,y\na,1,1_000\n", false, 2, "underscore"},
		{"TRUE", "diet,rack,y\na,1,TRUE\n", false, 2, "TRUE or FALSE"},
		{"too large", "diet,rack,y\na,1,1e400\n", false, 2, "too large"},
		{"empty level", "diet,rack,y\n,1,3\n", false, 2, "factor level is empty"},
	}
	for _, tc := range bad {
		_, _, err := ReadRoles(strings.NewReader(tc.in), "t.csv", roles, tc.comma)
		var ce *design.CSVError
		if !errors.As(err, &ce) || ce.Line != tc.line || !strings.Contains(ce.Msg, tc.msg) {
			t.Errorf("%s: got %v, want line %d and %q", tc.name, err, tc.line, tc.msg)
		}
	}
	if _, _, err := ReadRoles(strings.NewReader("\xFF\xFEd\x00"), "t.csv", roles, false); err == nil || !strings.Contains(err.Error(), "UTF-16") {
		t.Errorf("UTF-16: got %v", err)
	}
}

// countingReader counts the bytes read through it.
type countingReader struct {
	r io.Reader
	n int64
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}

// TestReadRolesStopsReading: an error near the top of a long table ends the
// read there: the reading goroutine is gone when ReadRoles returns and has
// not read the input to its end.
func TestReadRolesStopsReading(t *testing.T) {
	var b strings.Builder
	b.WriteString("diet,y\na,1\na,x\n")
	for i := 0; i < 400_000; i++ {
		b.WriteString("b,2.5\n")
	}
	before := runtime.NumGoroutine()
	cr := &countingReader{r: strings.NewReader(b.String())}
	_, _, err := ReadRoles(cr, "t.csv", Roles{Response: "y", Factors: []string{"diet"}}, false)
	if err == nil || !strings.Contains(err.Error(), "line 3") {
		t.Fatalf("error %v, want one naming line 3", err)
	}
	if cr.n >= int64(b.Len()) {
		t.Errorf("read all %d bytes after an error on line 3", cr.n)
	}
	// The goroutine has closed its channel when ReadRoles returns; give
	// the scheduler a moment to retire it.
	after := runtime.NumGoroutine()
	for wait := 0; after > before && wait < 1000; wait++ {
		time.Sleep(time.Millisecond)
		after = runtime.NumGoroutine()
	}
	if after > before {
		t.Errorf("%d goroutines after ReadRoles, %d before", after, before)
	}
}
