package main

import (
	"bytes"
	"context"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/web"
)

func TestServeParse(t *testing.T) {
	tests := []struct {
		name    string
		args    []string
		wantErr string
	}{
		{"default", nil, ""},
		{"loopback v6", []string{"--addr", "[::1]:9000"}, ""},
		{"localhost", []string{"--addr", "localhost:9000"}, ""},
		{"remote refused", []string{"--addr", "0.0.0.0:8722"}, "--addr 0.0.0.0:8722: not a loopback address"},
		{"remote allowed", []string{"--addr", "0.0.0.0:8722", "--allow-remote"}, ""},
		{"no port", []string{"--addr", "127.0.0.1"}, "write HOST:PORT"},
		{"tiny upload", []string{"--max-upload", "10"}, "--max-upload 10"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got *serveOptions
			cmd := newServeCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *serveOptions) error { got = o; return nil })
			cmd.SetArgs(tt.args)
			cmd.SilenceUsage, cmd.SilenceErrors = true, true
			err := cmd.Execute()
			if tt.wantErr == "" {
				if err != nil || got == nil {
					t.Fatalf("error %v", err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tt.wantErr) {
				t.Errorf("error %v, want %q", err, tt.wantErr)
			}
		})
	}
	if code, _, errs := runArgs(t, "serve", "--addr", "192.0.2.1:80"); code != exitUsage || !strings.Contains(errs, "--allow-remote") {
		t.Errorf("non-loopback address: exit %d, %s", code, errs)
	}
}

// TestServeRun starts the server, fetches a page and stops it as Ctrl-C
// would.
func TestServeRun(t *testing.T) {
	ctx, stop := context.WithCancel(context.Background())
	ready := make(chan string, 1)
	var errs bytes.Buffer
	done := make(chan error, 1)
	go func() {
		done <- serveRun(&streams{Out: io.Discard, Err: &errs}, &serveOptions{addr: "127.0.0.1:0", maxUpload: 1 << 20, ctx: ctx, ready: func(a string) { ready <- a }})
	}()
	var addr string
	select {
	case addr = <-ready:
	case err := <-done:
		t.Fatalf("serve: %v", err)
	case <-time.After(10 * time.Second):
		t.Fatal("serve did not start")
	}
	resp, err := http.Get("http://" + addr + "/size")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !strings.Contains(string(body), `name="groups"`) {
		t.Errorf("GET /size: %d", resp.StatusCode)
	}
	stop()
	if err := <-done; err != nil {
		t.Fatalf("serve: %v", err)
	}
	if !strings.Contains(errs.String(), "open http://"+addr+"/") || !strings.Contains(errs.String(), "stopped") {
		t.Errorf("messages: %s", errs.String())
	}
}

// TestServeLabels lays out a plan on the layout page of the server allot
// serve runs and downloads its labels.pdf: a PDF of one label per unit
// with the plan's title, and for a blind plan the codes only.
func TestServeLabels(t *testing.T) {
	created := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	srv, err := web.New(web.Config{Version: "test", MaxUpload: 1 << 20, Labels: serveLabels(func() time.Time { return created })})
	if err != nil {
		t.Fatal(err)
	}
	h := srv.Handler()
	do := func(req *http.Request) *httptest.ResponseRecorder {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		return rec
	}
	csrf := regexp.MustCompile(`name="csrf" value="([^"]+)"`).FindStringSubmatch(do(httptest.NewRequest(http.MethodGet, "http://127.0.0.1:8722/layout", nil)).Body.String())
	if csrf == nil {
		t.Fatal("no form token on the layout page")
	}
	downloadRE := regexp.MustCompile(`href="/download/([0-9a-f]+)" download="([^"]+)"`)
	for _, blind := range []string{"", design.BlindTreatment, design.BlindUnit} {
		t.Run("blind="+blind, func(t *testing.T) {
			form := url.Values{"csrf": {csrf[1]}, "title": {"Labels page test"}, "factor": {"dose=vehicle,lowdose,highdose"}, "design": {"rcbd"},
				"blocks": {"3"}, "block-name": {"litter"}, "response": {"weight_g"}, "blind": {blind}}
			if blind == "" {
				form.Set("seed", "11")
			}
			req := httptest.NewRequest(http.MethodPost, "http://127.0.0.1:8722/layout", strings.NewReader(form.Encode()))
			req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
			rec := do(req)
			if rec.Code != http.StatusOK {
				t.Fatalf("POST /layout: status %d\n%s", rec.Code, rec.Body.String())
			}
			ids := map[string]string{}
			for _, m := range downloadRE.FindAllStringSubmatch(rec.Body.String(), -1) {
				ids[m[2]] = m[1]
			}
			if ids["labels.pdf"] == "" {
				t.Fatalf("no labels.pdf offered; downloads %v", ids)
			}
			rec = do(httptest.NewRequest(http.MethodGet, "http://127.0.0.1:8722/download/"+ids["labels.pdf"], nil))
			if rec.Code != http.StatusOK || rec.Header().Get("Content-Type") != "application/pdf" || !strings.HasPrefix(rec.Body.String(), "%PDF-") {
				t.Fatalf("labels.pdf: status %d, %q, starts %.8q", rec.Code, rec.Header().Get("Content-Type"), rec.Body.String())
			}
			if _, err := exec.LookPath("pdftotext"); err != nil {
				t.Skip("pdftotext is not installed (Debian: poppler-utils); skipping the text check of labels.pdf")
			}
			path := filepath.Join(t.TempDir(), "labels.pdf")
			if err := os.WriteFile(path, rec.Body.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			out, err := exec.Command("pdftotext", path, "-").Output()
			if err != nil {
				t.Fatal(err)
			}
			text := string(out)
			for _, id := range []string{"101", "103", "303"} {
				if !strings.Contains(text, id) {
					t.Errorf("no label of unit %s in\n%s", id, text)
				}
			}
			if !strings.Contains(text, "Labels page test") {
				t.Errorf("no plan title in\n%s", text)
			}
			for _, name := range []string{"vehicle", "lowdose", "highdose"} {
				if got := strings.Contains(text, name); got != (blind == "") {
					t.Errorf("treatment %q on the labels: %v, want %v", name, got, blind == "")
				}
			}
		})
	}
}
