package workbook

import (
	"encoding/json"
	"reflect"
	"testing"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
)

// TestDecodeStored: the stored documents of every plan form decode as
// encoding/json decodes them, and a document in another form is left to
// encoding/json.
func TestDecodeStored(t *testing.T) {
	grid := design.Plan{
		Title: "grid", Design: design.RCBD, Factors: []design.Factor{{Name: "dose", Levels: []string{"qlow", "qmid", "qhigh"}}},
		Reps: []int{1, 1, 1}, BlockName: "litter", Responses: []design.Response{{Name: "score"}},
		Seed: 5, Blind: true, BlindMode: design.BlindUnit, PerBlock: 3, Order: true, Grid: &design.Grid{Rows: 2, Cols: 2, Numbering: design.RowWise, Placement: design.RandomPlaces},
	}
	rows := []design.UnitRow{{ID: "a", Block: "L1"}, {ID: "b", Block: "L1"}, {ID: "c", Block: "L1"}, {ID: "d", Block: "L1"},
		{ID: "e", Block: "L2"}, {ID: "f", Block: "L2"}, {ID: "g", Block: "L2"}}
	grid.Units, grid.Blocks = design.BlocksFromColumn(rows)
	gl, err := randomize.Assign(grid)
	if err != nil {
		t.Fatal(err)
	}
	layouts := map[string]design.Layout{"open": testLayout(t, false), "blind": testLayout(t, true), "unicode": unicodeLayout(t, 2),
		"split plot": splitLayout(t), "grid, order, spares, unit codes": gl.Sealed()}
	for name, l := range layouts {
		for _, sim := range []string{"", "SIMULATED by a test"} {
			t.Run(name+sim, func(t *testing.T) {
				doc, err := storedDoc(l, sim)
				if err != nil {
					t.Fatal(err)
				}
				checkDecodeStored(t, doc, true)
			})
		}
	}
	for _, doc := range []string{
		`{"plan":{},"units":[]}`,
		`{"plan":{"a":[1,{"b":"}]"}]},"units":[{"id":"x","block":1,"position":2,"treatment":-1,"row":0,"code":"q"}],"spares":[{"id":"s","block":2}]}`,
		`{"plan":{},"units":[{"id":"x","block":1,"position":2,"treatment":3}],"units":[]}`,
		`{"plan":{},"units":[{"id":"x\u0041","block":1,"position":2,"treatment":3}]}`,
		`{"plan":{},"units":[{"id":"x","block":1.0,"position":2,"treatment":3}]}`,
		`{"plan":{},"units":[{"id":"x","block":01,"position":2,"treatment":3}]}`,
		`{"plan":{},"units":[{"id":"x","block":1,"position":2,"treatment":3,"extra":1}]}`,
		`{"plan":{},"units":[{"block":1,"id":"x","position":2,"treatment":3}]}`,
		`{"plan":{},"units":[{"id":"x","block":1,"position":2,"treatment":99999999999999999999}]}`,
		`{"plan":{},"units":[],"labels":["a","b"],"simulated":"s"} `,
		`{"plan":{},"units":[],"labels":["a",]}`,
		`{"plan":{]},"units":[]}`,
		`{"plan":{},"units":null}`,
		`{"plan":{},"Units":[]}`,
	} {
		checkDecodeStored(t, []byte(doc), false)
	}
}

// checkDecodeStored fails unless decodeStored(doc), when it applies, gives
// what encoding/json gives; must says that it must apply.
func checkDecodeStored(t *testing.T, doc []byte, must bool) {
	t.Helper()
	st, units, ok := decodeStored(doc)
	if !ok {
		if must {
			t.Fatalf("not decoded: %s", doc)
		}
		return
	}
	var want stored
	var wantUnits []design.Unit
	if err := json.Unmarshal(doc, &want); err != nil {
		t.Fatalf("decoded %s, which encoding/json refuses: %v", doc, err)
	}
	if err := json.Unmarshal(want.Units, &wantUnits); err != nil {
		t.Fatalf("decoded %s, whose units encoding/json refuses: %v", doc, err)
	}
	want.Units = nil
	if !reflect.DeepEqual(st, want) || !reflect.DeepEqual(units, wantUnits) {
		t.Fatalf("%s:\n%+v %+v\nencoding/json: %+v %+v", doc, st, units, want, wantUnits)
	}
}

// FuzzDecodeStored: whatever the document, decodeStored either leaves it
// to encoding/json or decodes it exactly as encoding/json does.
func FuzzDecodeStored(f *testing.F) {
	doc, err := storedDoc(testLayout(f, true), "SIMULATED")
	if err != nil {
		f.Fatal(err)
	}
	f.Add(doc)
	f.Add([]byte(`{"plan":{"a":"}"},"units":[{"id":"x","block":-0,"position":2,"treatment":3,"main_plot":4}]}`))
	f.Fuzz(func(t *testing.T, doc []byte) {
		if utf8.Valid(doc) { // readData refuses other documents first
			checkDecodeStored(t, doc, false)
		}
	})
}
