package web

import (
	"bytes"
	"encoding/base64"
	"errors"
	"fmt"
	"html/template"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"
)

// maxLayoutRows is the largest layout (units × subsamples) the page makes;
// the command line has no such limit.
const maxLayoutRows = 20_000

// layoutForm is the form of allot layout (without a unit list).
func layoutForm() *Form {
	return &Form{Groups: []Group{
		{Legend: "Treatments", Fields: []*Field{
			{Name: "title", Label: "Title of the experiment", Kind: kindText},
			{Name: "factor", Label: "Treatment factors", Kind: kindLines, Help: "one per line, NAME=L1,L2,...; two to four lines make a factorial", Placeholder: "feed=F0,F1,F2,F3"},
			{Name: "control", Label: "Control level", Kind: kindText, Help: "one-factor plans, for example F0"},
			{Name: "reps", Label: "Replication", Kind: kindText, Help: "units per treatment (per block for rcbd), or TREATMENT=R,...,default=R"},
			{Name: "expect-n", Label: "Units justified", Kind: kindNumber, Help: "the number of units the sample size justified (allot size); a layout that uses another number is refused, saying by how many and why"},
		}},
		{Legend: "Design and blocks", Fields: []*Field{
			{Name: "design", Label: "Design", Kind: kindSelect, Options: []Option{{"", "completely randomised (crd), or blocks when blocks are given"}, {"crd", "completely randomised (crd)"}, {"rcbd", "randomised complete blocks (rcbd)"}}},
			{Name: "blocks", Label: "Number of blocks", Kind: kindNumber, Help: "rcbd: benches, litters, days or racks"},
			{Name: "block-name", Label: "What a block is called", Kind: kindText, Help: "bench, litter, day, rack (default block)"},
			{Name: "grid", Label: "Grid of each block", Kind: kindText, Help: "ROWSxCOLS, for example 2x4"},
			{Name: "numbering", Label: "Grid numbering", Kind: kindSelect, Options: []Option{{"", "row by row"}, {"serpentine", "serpentine (every other row reversed)"}}},
		}},
		{Legend: "Recording", Fields: []*Field{
			{Name: "response", Label: "Responses to record", Kind: kindLines, Help: "one per line, NAME or NAME:MIN..MAX", Placeholder: "height_cm:0..200"},
			{Name: "subsamples", Label: "Measurements per unit", Kind: kindNumber, Help: "one row each, averaged to the unit for analysis"},
			{Name: "order", Label: "Add a randomised measurement order within each block", Kind: kindCheck},
			{Name: "seed", Label: "Random seed", Kind: kindText, Help: "a whole number; leave empty to draw one (it is shown so that the layout can be repeated; for a blind plan it is kept in the key only)"},
		}},
		{Legend: "Blinding", Fields: []*Field{
			{Name: "blind", Label: "Codes instead of treatment names", Kind: kindSelect, Options: []Option{
				{"", "not blind: every output names the treatments"},
				{design.BlindTreatment, "one code per treatment (a short key)"},
				{design.BlindUnit, "one code per unit (a longer key, safer)"},
			}, Help: "Codes replace the treatment names on this page and in every download but the key, which is offered once. " +
				"With one code per treatment, units that share a code share a treatment: learning one unit's treatment (from an animal's reaction, say) reveals it for every unit with that code. " +
				"With one code per unit, learning one unit's treatment reveals no other, and the key lists every unit. " +
				"The allocation follows from the seed, so leave the seed empty: one is drawn and kept in the key only."},
		}},
		{Legend: "Unit list (optional: animals, plots or pots you already have)", Fields: []*Field{
			{Name: "units", Label: "Unit list (.csv with a header row)", Kind: kindFile, Accept: ".csv,text/csv", Help: "one row per unit; without it units are numbered block × 100 + position. Choose it again each time you submit"},
			{Name: "id-column", Label: "Column with the unit ID", Kind: kindText, Default: "id", Value: "id"},
			{Name: "block-column", Label: "Column that gives each unit's block", Kind: kindText, Help: "rcbd, for example litter"},
			{Name: "match-on", Label: "Column to sort on and cut into matched blocks", Kind: kindText, Help: "rcbd, for example weight"},
			{Name: "per-block", Label: "Units to take from each block", Kind: kindNumber, Help: "with a block column: K units of each block are taken at random by a seeded rule fixed before allocation; the rest are listed as spare"},
			{Name: "allow-unequal", Label: "Use every unit although the blocks differ in size (treatments then replicated unequally)", Kind: kindCheck},
		}},
	}}
}

// download is one offered file.
type download struct {
	ID, Name, What string
	Once           bool
}

// layoutResult is what the layout page shows. For a blind plan every
// field but Key comes from the sealed layout: no seed, no treatment of any
// unit.
type layoutResult struct {
	Summary   string
	Map       template.URL
	MapAlt    string
	JSON      string
	Downloads []download
	Key       *download
	// Blind is the blind mode ("" when the plan is not blind).
	Blind string
	// Seed is the seed of a plan that is not blind (0 for a blind one).
	Seed      uint64
	DrawnSeed bool
	// GivenSeed marks a blind plan laid out with a seed typed in.
	GivenSeed bool
	Command   string
}

func (s *Server) layoutPage(w http.ResponseWriter, r *http.Request) {
	f := layoutForm()
	if r.Method != http.MethodPost {
		s.render(w, http.StatusOK, "layout", page{Title: "Lay out the trial", Form: f})
		return
	}
	var files *multipart.Form
	if strings.HasPrefix(r.Header.Get("Content-Type"), "multipart/") {
		if err := r.ParseMultipartForm(maxUnitList); err != nil {
			status := http.StatusBadRequest
			var me *http.MaxBytesError
			if errors.As(err, &me) {
				status = http.StatusRequestEntityTooLarge
				f.field("units").Error = fmt.Sprintf("The form is larger than %s, the limit for a unit list; check that this is the right file.", mib(me.Limit))
			} else {
				f.Problem = "The form could not be read (" + err.Error() + "); submit it again."
			}
			s.render(w, status, "layout", page{Title: "Lay out the trial", Form: f})
			return
		}
		defer r.MultipartForm.RemoveAll()
		files = r.MultipartForm
		f.fill(files.Value)
	} else {
		if !s.parseForm(w, r, "layout", "Lay out the trial", f) {
			return
		}
		f.fill(r.PostForm)
	}
	res, err := s.layoutAnswer(f, files)
	if err != nil {
		var de *design.Error
		var ce *design.CSVError
		switch {
		case errors.As(err, &de):
			f.setError(strings.ReplaceAll(de.Field, "_", "-"), de.Msg)
		case errors.As(err, &ce):
			f.setError("units", err.Error())
		default:
			f.Problem = err.Error()
		}
	}
	if f.HasErrors() {
		s.render(w, http.StatusUnprocessableEntity, "layout", page{Title: "Lay out the trial", Form: f})
		return
	}
	s.render(w, http.StatusOK, "layout", page{Title: "Lay out the trial", Form: f, Result: res})
}

// layoutAnswer parses the form into the design.Spec that allot layout
// builds from its flags, resolves and randomises it as the command does,
// and stores the files for download.
func (s *Server) layoutAnswer(f *Form, files *multipart.Form) (*layoutResult, error) {
	sp := design.Spec{
		Title: f.text("title"), Design: f.text("design"), Factor: f.lines("factor"), Control: f.text("control"),
		Reps: f.text("reps"), Blocks: f.int("blocks"), BlockName: f.text("block-name"), Response: f.lines("response"),
		Grid: f.text("grid"), Numbering: f.text("numbering"), Order: f.check("order"),
		Subsamples: f.int("subsamples"), IDColumn: f.text("id-column"), BlockColumn: f.text("block-column"), MatchOn: f.text("match-on"),
		PerBlock: f.int("per-block"), AllowUnequal: f.check("allow-unequal"), ExpectN: f.int("expect-n"),
	}
	if err := sp.Blind.Set(f.text("blind")); err != nil {
		f.field("blind").Error = "Choose one of the offered modes (" + err.Error() + ")"
	} else if x := f.field("blind"); sp.Blind == "" {
		x.canon = nil // "none" or "false": no flag
	} else {
		x.Value, x.canon = string(sp.Blind), []string{string(sp.Blind)}
	}
	if sp.IDColumn == "" {
		sp.IDColumn = "id"
	}
	res := &layoutResult{}
	if v := f.text("seed"); v != "" {
		seed, err := design.ParseSeed(v)
		if err != nil {
			f.field("seed").Error = fmt.Sprintf("Must be an unsigned whole number below 2^64, for example 20261201 (%q is not)", v)
		} else {
			st := design.SeedText(seed)
			sp.Seed = &st
		}
	}
	if f.HasErrors() {
		return nil, nil
	}
	blind := sp.Blind != ""
	switch {
	case sp.Seed == nil:
		seed, err := randomize.NewSeed()
		if err != nil {
			return nil, err
		}
		st := design.SeedText(seed)
		sp.Seed, res.DrawnSeed = &st, true
		// A blind plan's seed re-derives its allocation: it goes into the
		// key only, as with allot layout --blind.
		if !blind {
			x := f.field("seed")
			x.Value = strconv.FormatUint(seed, 10)
			x.canon = []string{x.Value}
		}
	case blind:
		res.GivenSeed = true
	}
	// A unit list is read as allot layout reads --units FILE.csv.
	var units []design.UnitRow
	if files != nil {
		fh, data, err := upload(files, "units")
		switch {
		case err != nil:
			f.field("units").Error = "The unit list could not be read: " + err.Error()
			return nil, nil
		case fh != nil:
			name := filepath.Base(fh.Filename)
			if !strings.EqualFold(filepath.Ext(name), ".csv") {
				f.field("units").Error = fmt.Sprintf("%s is not a .csv file; save the list as CSV (comma-separated) and choose that.", name)
				return nil, nil
			}
			if units, err = design.ReadUnitList(bytes.NewReader(data), name, sp.IDColumn, sp.BlockColumn, sp.MatchOn); err != nil {
				return nil, err
			}
			sp.Units = name
			f.field("units").canon = []string{name}
		}
	}
	plan, err := sp.Resolve(units)
	if err != nil {
		return nil, err
	}
	if rows := plan.NumUnits() * max(1, plan.Subsamples); rows > maxLayoutRows {
		f.Problem = fmt.Sprintf("This plan has %d rows; the page lays out at most %d, so that one request cannot hold the computer for long. Use allot layout on the command line for larger plans.", rows, maxLayoutRows)
		return nil, nil
	}
	full, err := randomize.Assign(plan)
	if err != nil {
		return nil, err
	}
	// As allot layout does: the key comes from the full layout, everything
	// else (page and downloads) from the sealed one.
	lay := full.Sealed()
	res.Blind = string(sp.Blind)
	if !plan.Blind {
		res.Seed = plan.Seed
	}
	base := fileBase(plan.Title, "layout")
	var b bytes.Buffer
	if err := report.LayoutText(&b, lay); err != nil {
		return nil, err
	}
	res.Summary = b.String()
	b.Reset()
	if err := report.LayoutJSON(&b, lay); err != nil {
		return nil, err
	}
	res.JSON = b.String()
	layoutJSON := append([]byte(nil), b.Bytes()...)

	wb, err := s.workbookBytes(lay)
	if err != nil {
		return nil, err
	}
	b.Reset()
	if err := workbook.WriteCSV(&b, lay); err != nil {
		return nil, err
	}
	csv := append([]byte(nil), b.Bytes()...)
	fig := report.MapFigure(lay)
	mapSVG, err := fig.Render("svg")
	if err != nil {
		return nil, err
	}
	res.Map = template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(mapSVG))
	res.MapAlt = fig.Title + ": the place of every unit with its " + map[bool]string{false: "treatment", true: "blind code"}[plan.Blind] + "; the same map is in the workbook's map sheet and the downloads"
	add := func(name, ctype, what string, data []byte) {
		id := s.store.put(item{name: name, contentType: ctype, data: data})
		res.Downloads = append(res.Downloads, download{ID: id, Name: name, What: what})
	}
	add(base+".xlsx", "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", "data-entry workbook", wb)
	add(base+"-map.svg", "image/svg+xml", "map (SVG, for printing on A4)", mapSVG)
	id := s.store.put(item{name: base + "-map.png", contentType: "image/png", make: func() ([]byte, error) { return fig.Render("png") }})
	res.Downloads = append(res.Downloads, download{ID: id, Name: base + "-map.png", What: "map (PNG)"})
	add(base+".json", "application/json", "plan and assignment (layout JSON)", layoutJSON)
	add(base+".csv", "text/csv; charset=utf-8", "the workbook's rows as CSV", csv)
	if s.cfg.Labels != nil {
		labels := s.cfg.Labels
		id := s.store.put(item{name: "labels.pdf", contentType: "application/pdf", make: func() ([]byte, error) { return labels(lay) }})
		res.Downloads = append(res.Downloads, download{ID: id, Name: "labels.pdf", What: "labels with QR codes (as allot labels prints them)"})
	}
	extra := []string{"-o", base + ".xlsx", "--map", base + "-map.svg"}
	if plan.Blind {
		var kb bytes.Buffer
		if err := design.WriteKey(&kb, design.KeyOf(full)); err != nil {
			return nil, err
		}
		id := s.store.put(item{name: base + "-key.json", contentType: "application/json", data: kb.Bytes(), once: true})
		res.Key = &download{ID: id, Name: base + "-key.json", What: "unblinding key", Once: true}
		extra = append(extra, "--key", base+"-key.json")
	}
	res.Command = f.command("allot layout", extra...)
	return res, nil
}

// workbookBytes writes the workbook through package workbook into a
// temporary folder that is removed at once.
func (s *Server) workbookBytes(lay design.Layout) ([]byte, error) {
	dir, err := os.MkdirTemp("", "allot-serve-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	p := filepath.Join(dir, "layout.xlsx")
	if err := workbook.Write(p, lay, workbook.Meta{Version: s.cfg.Version, Created: s.cfg.Now()}, false); err != nil {
		return nil, err
	}
	return os.ReadFile(p)
}

var unsafeName = regexp.MustCompile(`[^a-z0-9]+`)

// fileBase makes a file name from a title.
func fileBase(title, fallback string) string {
	b := strings.Trim(unsafeName.ReplaceAllString(strings.ToLower(title), "-"), "-")
	if len(b) > 40 {
		b = strings.Trim(b[:40], "-")
	}
	if b == "" {
		return fallback
	}
	return b
}
