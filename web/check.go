package web

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/report"
)

// checkForm is the form of allot check and allot analyze for a workbook.
func checkForm() *Form {
	return &Form{Groups: []Group{
		{Legend: "The filled workbook", Fields: []*Field{
			{Name: "file", Label: "Workbook (.xlsx)", Kind: kindFile, Accept: ".xlsx,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", Help: "the data-entry workbook written by the layout page or allot layout, filled in; it is checked in memory and not kept"},
			{Name: "key", Label: "Unblinding key (.json), for a blind workbook", Kind: kindFile, Accept: ".json,application/json"},
			{Name: "decimal-comma", Label: "Accept a decimal comma (12,5) in response cells", Kind: kindCheck},
		}},
		{Legend: "The analysis", Fields: []*Field{
			{Name: "response", Label: "Response to analyse", Kind: kindText, Help: "leave empty for every response"},
			{Name: "posthoc", Label: "Follow-up comparisons", Kind: kindSelect, Default: "tukey", Value: "tukey", Options: []Option{{"tukey", "Tukey HSD (all pairs)"}, {"dunnett", "Dunnett (each level with the control)"}, {"holm", "Holm-adjusted t tests"}, {"none", "none"}}},
			{Name: "control", Label: "Control level for Dunnett", Kind: kindText, Help: "default: the plan's control"},
			{Name: "sides", Label: "Sides (Dunnett)", Kind: kindSelect, Default: "2", Value: "2", Options: []Option{{"2", "two-sided"}, {"1", "one-sided (treatment above control)"}}},
			{Name: "alpha", Label: "Significance level (alpha)", Kind: kindNumber, Default: "0.05", Value: "0.05"},
			{Name: "ss", Label: "Sums of squares", Kind: kindSelect, Default: "3", Value: "3", Options: []Option{{"3", "Type III"}, {"2", "Type II"}, {"1", "Type I (sequential)"}}},
		}},
	}}
}

// checkResult is what the check page shows.
type checkResult struct {
	File      string
	Title     string
	Units     int
	Responses []responseCount
	Problems  []workbook.Problem
	Errors    int
	Warnings  int
	Sealed    bool
	Text      string // the check as allot check prints it
	CheckJSON string
	CheckID   string
	// The analysis, when the check found no errors.
	Analysed     bool
	AnalysisNote string
	ReportID     string
	JSON         []string // one allot analyze --json object per response
	JSONID       string
	CheckCommand string
	Command      string
}

type responseCount struct {
	Name          string
	Values, Units int
}

func (s *Server) checkPage(w http.ResponseWriter, r *http.Request) {
	f := checkForm()
	const title = "Check and analyse a filled workbook"
	if r.Method != http.MethodPost {
		s.render(w, http.StatusOK, "check", page{Title: title, Form: f})
		return
	}
	if err := r.ParseMultipartForm(s.cfg.MaxUpload); err != nil {
		status := http.StatusBadRequest
		var me *http.MaxBytesError
		if errors.As(err, &me) {
			status = http.StatusRequestEntityTooLarge
			f.field("file").Error = fmt.Sprintf("The upload is larger than %s, the limit; a data-entry workbook is usually far smaller. Check that this is the right file.", mib(me.Limit))
		} else {
			f.Problem = "The form could not be read (" + err.Error() + "); choose the file again."
		}
		s.render(w, status, "check", page{Title: title, Form: f})
		return
	}
	// Parts beyond the memory limit would be temporary files: remove them
	// when the request ends, whatever happens.
	defer r.MultipartForm.RemoveAll()
	f.fill(r.MultipartForm.Value)
	res := s.checkAnswer(f, r.MultipartForm)
	status := http.StatusOK
	if f.HasErrors() {
		status = http.StatusUnprocessableEntity
	}
	if res == nil {
		s.render(w, status, "check", page{Title: title, Form: f})
		return
	}
	s.render(w, status, "check", page{Title: title, Form: f, Result: res})
}

func mib(n int64) string { return fmt.Sprintf("%.0f MiB", float64(n)/(1<<20)) }

// upload returns the bytes of an uploaded file field, or nil when none was
// chosen.
func upload(m *multipart.Form, name string) (*multipart.FileHeader, []byte, error) {
	fhs := m.File[name]
	if len(fhs) == 0 || fhs[0].Size == 0 && fhs[0].Filename == "" {
		return nil, nil, nil
	}
	fh := fhs[0]
	fl, err := fh.Open()
	if err != nil {
		return nil, nil, err
	}
	defer fl.Close()
	b, err := io.ReadAll(fl)
	return fh, b, err
}

// checkAnswer reads the workbook as allot check does, and analyses it as
// allot analyze does when the check found no errors.
func (s *Server) checkAnswer(f *Form, m *multipart.Form) *checkResult {
	set := options.Analysis{SS: f.int("ss"), Alpha: f.float("alpha"), PostHoc: f.text("posthoc"), Control: f.text("control"), Sides: f.int("sides")}
	if set.PostHoc == "" {
		set.PostHoc = "tukey"
	}
	response := f.text("response")
	dc := f.check("decimal-comma")
	if !f.HasErrors() {
		if err := set.Validate(); err != nil {
			f.optionError(err)
		}
	}
	fh, data, err := upload(m, "file")
	switch {
	case err != nil:
		f.field("file").Error = "The file could not be read: " + err.Error()
	case fh == nil:
		f.field("file").Error = "Choose the filled workbook (.xlsx) to check."
	case !strings.EqualFold(filepath.Ext(fh.Filename), ".xlsx"):
		f.field("file").Error = fmt.Sprintf("%s is not an .xlsx workbook; save it as an Excel workbook (.xlsx) and upload that.", fh.Filename)
	case !bytes.HasPrefix(data, []byte("PK\x03\x04")):
		f.field("file").Error = fmt.Sprintf("%s is not an .xlsx workbook (its content is not one); save it as an Excel workbook (.xlsx) and upload that.", fh.Filename)
	}
	var key *design.Key
	kh, kb, err := upload(m, "key")
	switch {
	case err != nil:
		f.field("key").Error = "The key could not be read: " + err.Error()
	case kh != nil:
		k, err := design.ParseKey(kb)
		if err != nil {
			f.field("key").Error = fmt.Sprintf("%s: %s", kh.Filename, err)
		} else {
			key = &k
		}
	}
	if f.HasErrors() {
		return nil
	}
	name := filepath.Base(fh.Filename)
	fl, err := readUpload(name, data, workbook.ReadOptions{DecimalComma: dc, Key: key})
	if err != nil {
		f.field("file").Error = err.Error()
		return nil
	}
	extra := []string{}
	if kh != nil {
		extra = append(extra, "--key", options.ShellQuote(filepath.Base(kh.Filename)))
	}
	if dc {
		extra = append(extra, "--decimal-comma")
	}
	res := &checkResult{File: name, Title: fl.Layout.Plan.Title, Units: len(fl.Layout.Units), Problems: fl.Problems, Sealed: fl.Sealed,
		CheckCommand: strings.Join(append([]string{"allot check", options.ShellQuote(name)}, extra...), " ")}
	for _, p := range fl.Problems {
		if p.Severity == workbook.Error {
			res.Errors++
		} else {
			res.Warnings++
		}
	}
	for k, r := range fl.Responses {
		c := responseCount{Name: r, Units: len(fl.Values[k])}
		for _, v := range fl.Values[k] {
			if !v.Missing {
				c.Values++
			}
		}
		res.Responses = append(res.Responses, c)
	}
	var b bytes.Buffer
	_ = report.CheckText(&b, name, fl)
	res.Text = b.String()
	b.Reset()
	_ = report.CheckJSON(&b, name, fl)
	res.CheckJSON = b.String()
	res.CheckID = s.store.put(item{name: fileBase(strings.TrimSuffix(name, filepath.Ext(name)), "workbook") + "-check.json", contentType: "application/json", data: append([]byte(nil), b.Bytes()...)})

	// The analysis: the command line analyses everything except the
	// form's read flags, which it shares with check.
	for _, n := range []string{"file", "key", "decimal-comma"} {
		f.field(n).canon = nil
	}
	cmd := f.command("allot analyze")
	res.Command = strings.Join(append([]string{cmd, options.ShellQuote(name)}, extra...), " ")
	switch {
	case res.Errors > 0:
		res.AnalysisNote = "The analysis waits until the errors above are corrected in the workbook."
		return res
	case fl.Sealed:
		res.AnalysisNote = "This workbook is blind: add its unblinding key to analyse it."
		return res
	}
	if fl.Layout.Plan.Strata() {
		return s.analyseStrata(res, fl, name, response, set.Alpha)
	}
	for _, r := range fl.Layout.Plan.Responses {
		if r.Of != "" {
			// Measured at several times: a split plot in time, as the
			// command analyses it.
			return s.analyseRepeated(res, fl, name, response, set.Alpha)
		}
	}
	jobs, plan, check, err := options.WorkbookJobs(fl, name, response)
	if err != nil {
		if !f.optionError(err) {
			res.AnalysisNote = err.Error()
		}
		return res
	}
	var all []report.Analysis
	var js bytes.Buffer
	for _, j := range jobs {
		r, err := j.Run(set)
		if err != nil {
			if !f.optionError(err) {
				res.AnalysisNote = fmt.Sprintf("%s: %s: %s", name, j.Data.Response, err)
			}
			return res
		}
		if j.ModelNote != "" {
			r.Notes = append(r.Notes, j.ModelNote)
		}
		all = append(all, report.Analysis{Result: r, Missing: j.Missing, Unit: j.Unit, BlockName: j.BlockName, Simulated: j.Simulated})
	}
	// One document for the run, as allot analyze --json writes it.
	if err := report.AnalysesJSON(&js, s.cfg.Version, all); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	res.JSON = []string{js.String()}
	var html bytes.Buffer
	if err := report.HTML(&html, report.HTMLReport{Analyses: all, Plan: plan, Check: check, Command: res.Command, Version: s.cfg.Version}); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	stem := fileBase(strings.TrimSuffix(name, filepath.Ext(name)), "workbook")
	res.ReportID = s.store.put(item{name: stem + "-report.html", contentType: "text/html; charset=utf-8", data: html.Bytes(), viewable: true})
	res.JSONID = s.store.put(item{name: stem + "-analysis.json", contentType: "application/json", data: js.Bytes()})
	res.Analysed = true
	return res
}

// analyseStrata analyses a split-plot or Latin-square workbook stratum by
// stratum, as allot analyze does, into the report and JSON downloads.
func (s *Server) analyseStrata(res *checkResult, fl *workbook.Filled, name, response string, alpha float64) *checkResult {
	p := fl.Layout.Plan
	var all []report.StrataAnalysis
	for k, r := range fl.Responses {
		if response != "" && r != response {
			continue
		}
		obs := fl.StrataObservations(k)
		if obs.Values.Len() == 0 {
			res.AnalysisNote = fmt.Sprintf("%s: response %q has no values yet; fill it in first.", name, r)
			return res
		}
		a, err := report.RunStrata(p, r, obs, alpha)
		if err != nil {
			res.AnalysisNote = fmt.Sprintf("%s: %s: %s", name, r, err)
			return res
		}
		a.Simulated = fl.Simulated()
		all = append(all, a)
	}
	if len(all) == 0 {
		res.AnalysisNote = fmt.Sprintf("%s: the plan has no response %q (responses: %s).", name, response, strings.Join(fl.Responses, ", "))
		return res
	}
	var js, html bytes.Buffer
	if err := report.StrataAnalysesJSON(&js, s.cfg.Version, all); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	res.JSON = []string{js.String()}
	var check []string
	for _, pr := range fl.Problems {
		check = append(check, pr.String())
	}
	if err := report.HTML(&html, report.HTMLReport{Strata: all, Plan: &p, Check: check, Command: res.Command, Version: s.cfg.Version}); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	stem := fileBase(strings.TrimSuffix(name, filepath.Ext(name)), "workbook")
	res.ReportID = s.store.put(item{name: stem + "-report.html", contentType: "text/html; charset=utf-8", data: html.Bytes(), viewable: true})
	res.JSONID = s.store.put(item{name: stem + "-analysis.json", contentType: "application/json", data: js.Bytes()})
	res.Analysed = true
	return res
}

// analyseRepeated analyses the responses measured at several times as a
// split plot in time, as allot analyze does: the JSON document of them all
// and the report page of the first (or of the chosen response).
func (s *Server) analyseRepeated(res *checkResult, fl *workbook.Filled, name, response string, alpha float64) *checkResult {
	profiles, err := options.RepeatedProfiles(fl, response, alpha)
	if err != nil {
		res.AnalysisNote = fmt.Sprintf("%s: %s", name, err)
		return res
	}
	if len(profiles) == 0 {
		res.AnalysisNote = fmt.Sprintf("%s: no response measured at several times is called %q.", name, response)
		return res
	}
	var docs []report.MethodDoc
	for _, pr := range profiles {
		docs = append(docs, report.MethodDoc{Response: pr.Response, Method: "repeated", Result: pr.RMResult})
	}
	var js, html bytes.Buffer
	if err := report.AnalysesWithMethodsJSON(&js, s.cfg.Version, nil, docs); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	res.JSON = []string{js.String()}
	if err := report.ProfilesHTML(&html, profiles[0], res.Command, s.cfg.Version); err != nil {
		res.AnalysisNote = err.Error()
		return res
	}
	if len(profiles) > 1 {
		res.AnalysisNote = fmt.Sprintf("The report shows %s; the JSON holds all %d responses measured at several times. Name one in the response field for its report.", profiles[0].Response, len(profiles))
	}
	stem := fileBase(strings.TrimSuffix(name, filepath.Ext(name)), "workbook")
	res.ReportID = s.store.put(item{name: stem + "-report.html", contentType: "text/html; charset=utf-8", data: html.Bytes(), viewable: true})
	res.JSONID = s.store.put(item{name: stem + "-analysis.json", contentType: "application/json", data: js.Bytes()})
	res.Analysed = true
	return res
}

// readUpload checks the uploaded workbook with package workbook. The bytes
// go to a temporary file (the reader works on files) that is removed before
// returning; messages name the uploaded file, not the temporary one.
func readUpload(name string, data []byte, opt workbook.ReadOptions) (*workbook.Filled, error) {
	tmp, err := os.CreateTemp("", "allot-upload-*.xlsx")
	if err != nil {
		return nil, err
	}
	path := tmp.Name()
	defer os.Remove(path)
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		return nil, err
	}
	if err := tmp.Close(); err != nil {
		return nil, err
	}
	fl, err := workbook.Read(path, opt)
	if err != nil {
		return nil, errors.New(strings.ReplaceAll(err.Error(), path, name))
	}
	return fl, nil
}
