// Package web is the local web page of allot serve: three forms (plan the
// size, lay out the trial, check and analyse a filled workbook) whose
// fields carry the names of the command-line flags. Handlers only parse a
// form into the same requests the commands build (package options, the
// design.Spec of allot layout) and render what the packages return; every
// number comes from the same functions as on the command line.
//
// Built on net/http, html/template and embed only: no framework, nothing
// fetched from the network, and one small script for the copy buttons (the
// pages work without it). Safety: nothing is kept between requests except
// the files offered for download (in memory, for an hour; a blinding key
// only until its first download); every POST carries a token signed by a
// key drawn at start, and cross-origin posts are refused; request bodies,
// uploads and handling time are limited; an uploaded workbook is written to
// a temporary file only for the duration of its request.
package web

import (
	"context"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"embed"
	"encoding/hex"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"net"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
)

//go:embed templates/*.html
var templateFS embed.FS

//go:embed static
var staticFS embed.FS

// Limits and defaults.
const (
	DefaultMaxUpload = 8 << 20 // bytes of an uploaded workbook (with the form)
	DefaultTimeout   = 60 * time.Second
	maxForm          = 64 << 10 // bytes of a form without upload
	maxUnitList      = 2 << 20  // bytes of the layout form with its unit list
	tokenLife        = 12 * time.Hour
)

// Labels makes the printable labels of a layout, a PDF offered as
// labels.pdf; allot serve passes the renderer of allot labels (package
// report/paper). It receives the sealed layout, so for a blind plan it sees
// codes only, and it runs when the file is downloaded (a label takes about
// 1.5 ms to draw, so a large plan's labels would hold up its page). While
// Config.Labels is nil no labels are offered.
type Labels func(l design.Layout) ([]byte, error)

// Config configures a Server.
type Config struct {
	Version     string           // allot version, shown and recorded in reports
	MaxUpload   int64            // largest check request in bytes; 0 means DefaultMaxUpload
	Timeout     time.Duration    // longest time a request may take; 0 means DefaultTimeout
	AllowRemote bool             // accept any Host header (allot serve --allow-remote)
	Labels      Labels           // nil: no labels download
	Now         func() time.Time // clock for workbook metadata; nil means time.Now
}

// Server holds the handlers of the site.
type Server struct {
	cfg    Config
	secret []byte
	pages  map[string]*template.Template
	store  *store
}

// New returns a server with a fresh token key.
func New(cfg Config) (*Server, error) {
	if cfg.MaxUpload <= 0 {
		cfg.MaxUpload = DefaultMaxUpload
	}
	if cfg.Timeout <= 0 {
		cfg.Timeout = DefaultTimeout
	}
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
	s := &Server{cfg: cfg, secret: make([]byte, 32), pages: map[string]*template.Template{}, store: newStore(cfg.Now)}
	if _, err := rand.Read(s.secret); err != nil {
		return nil, err
	}
	funcs := template.FuncMap{
		// formArgs is what the "form" template needs; a multipart form
		// carries its token in the URL too, so that it is checked before
		// the upload is read.
		"formArgs": func(p page, action string, multipart bool, submit string) map[string]any {
			if multipart {
				action += "?csrf=" + url.QueryEscape(p.CSRF)
			}
			return map[string]any{"Action": action, "Multipart": multipart, "CSRF": p.CSRF, "Form": p.Form, "Submit": submit}
		},
		"cmd": func(id, text string) map[string]string { return map[string]string{"ID": id, "Text": text} },
	}
	for _, p := range []string{"home", "size", "layout", "check", "error"} {
		t, err := template.New(p).Funcs(funcs).ParseFS(templateFS, "templates/base.html", "templates/form.html", "templates/"+p+".html")
		if err != nil {
			return nil, fmt.Errorf("web: template %s: %w", p, err)
		}
		s.pages[p] = t
	}
	return s, nil
}

// Handler returns the site's handler with its limits and protections.
func (s *Server) Handler() http.Handler {
	mux := http.NewServeMux()
	static, _ := fs.Sub(staticFS, "static")
	mux.Handle("GET /static/", http.StripPrefix("/static/", http.FileServerFS(static)))
	mux.HandleFunc("GET /{$}", s.home)
	mux.HandleFunc("GET /size", s.sizePage)
	mux.HandleFunc("POST /size", s.sizePage)
	mux.HandleFunc("GET /layout", s.layoutPage)
	mux.HandleFunc("POST /layout", s.layoutPage)
	mux.HandleFunc("GET /check", s.checkPage)
	mux.HandleFunc("POST /check", s.checkPage)
	mux.HandleFunc("GET /download/{id}", s.download)
	var h http.Handler = mux
	h = s.guard(h)
	h = http.NewCrossOriginProtection().Handler(h)
	return http.TimeoutHandler(h, s.cfg.Timeout, "allot: the request took too long and was stopped; try smaller inputs")
}

// Serve answers on ln until ctx is done, then stops accepting connections
// and waits up to grace for requests in flight to finish.
func (s *Server) Serve(ctx context.Context, ln net.Listener, grace time.Duration) error {
	srv := &http.Server{
		Handler:           s.Handler(),
		ReadHeaderTimeout: 10 * time.Second,
		ReadTimeout:       s.cfg.Timeout,
		WriteTimeout:      s.cfg.Timeout + 10*time.Second,
		IdleTimeout:       2 * time.Minute,
		MaxHeaderBytes:    64 << 10,
	}
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ln) }()
	select {
	case err := <-done:
		return err
	case <-ctx.Done():
	}
	sctx, cancel := context.WithTimeout(context.Background(), grace)
	defer cancel()
	err := srv.Shutdown(sctx)
	if e := <-done; e != nil && !errors.Is(e, http.ErrServerClosed) && err == nil {
		err = e
	}
	return err
}

// guard sets the security headers, refuses a foreign Host (DNS rebinding)
// unless remote use is allowed, limits bodies and checks the token of every
// POST.
func (s *Server) guard(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", "default-src 'self'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; frame-ancestors 'self'; form-action 'self'; base-uri 'none'")
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("Referrer-Policy", "no-referrer")
		h.Set("Cache-Control", "no-store")
		if !s.cfg.AllowRemote && !loopbackHost(r.Host) {
			http.Error(w, "allot serve answers only on this computer (host "+r.Host+" refused); start it with --allow-remote to serve other machines", http.StatusMisdirectedRequest)
			return
		}
		if r.Method == http.MethodPost {
			limit := int64(maxForm)
			switch r.URL.Path {
			case "/check":
				limit = s.cfg.MaxUpload
			case "/layout":
				limit = maxUnitList
			}
			r.Body = http.MaxBytesReader(w, r.Body, limit)
			if !s.validToken(r.Header.Get("X-Allot-Token"), r.URL.Query().Get("csrf"), r) {
				s.render(w, http.StatusForbidden, "error", page{Title: "The form has expired", Message: "The page was open too long, or the form came from elsewhere. Open the page again and resubmit."})
				return
			}
		}
		next.ServeHTTP(w, r)
	})
}

// loopbackHost reports whether the Host header names this computer.
func loopbackHost(host string) bool {
	h, _, err := net.SplitHostPort(host)
	if err != nil {
		h = host
	}
	h = strings.Trim(h, "[]")
	if strings.EqualFold(h, "localhost") {
		return true
	}
	ip := net.ParseIP(h)
	return ip != nil && ip.IsLoopback()
}

// token returns a form token: the time it was made and its HMAC under the
// server's key. It needs no state on the server.
func (s *Server) token() string {
	ts := strconv.FormatInt(s.cfg.Now().Unix(), 10)
	m := hmac.New(sha256.New, s.secret)
	m.Write([]byte(ts))
	return ts + "." + hex.EncodeToString(m.Sum(nil))
}

// validToken checks the csrf token of a POST. For a multipart form the
// token is read from the URL query (the page puts it there as well), so that
// a bad token is refused before the upload is parsed.
func (s *Server) validToken(header, query string, r *http.Request) bool {
	tok := header
	if tok == "" {
		tok = query
	}
	if tok == "" && !strings.HasPrefix(r.Header.Get("Content-Type"), "multipart/") {
		tok = r.PostFormValue("csrf")
	}
	ts, mac, ok := strings.Cut(tok, ".")
	if !ok {
		return false
	}
	sec, err := strconv.ParseInt(ts, 10, 64)
	if err != nil {
		return false
	}
	age := s.cfg.Now().Sub(time.Unix(sec, 0))
	if age < -time.Minute || age > tokenLife {
		return false
	}
	got, err := hex.DecodeString(mac)
	if err != nil {
		return false
	}
	m := hmac.New(sha256.New, s.secret)
	m.Write([]byte(ts))
	return hmac.Equal(got, m.Sum(nil))
}

// page is what every template receives.
type page struct {
	Title   string
	Page    string
	Version string
	CSRF    string
	Message string
	Form    *Form
	Result  any
}

func (s *Server) render(w http.ResponseWriter, status int, name string, p page) {
	p.Page = name
	p.Version = s.cfg.Version
	p.CSRF = s.token()
	var b strings.Builder
	if err := s.pages[name].ExecuteTemplate(&b, "base", p); err != nil {
		http.Error(w, "allot: could not render the page: "+err.Error(), http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	_, _ = w.Write([]byte(b.String()))
}

func (s *Server) home(w http.ResponseWriter, r *http.Request) {
	s.render(w, http.StatusOK, "home", page{Title: "Plan, lay out and analyse a comparative experiment"})
}

// download serves a stored file; a key is removed once it is fetched.
func (s *Server) download(w http.ResponseWriter, r *http.Request) {
	it, ok := s.store.take(r.PathValue("id"))
	if !ok {
		s.render(w, http.StatusNotFound, "error", page{Title: "This download is gone", Message: "Downloads are kept for an hour, and a blinding key only until it is first downloaded. Submit the form again to make the files anew (the same seed gives the same layout)."})
		return
	}
	disp := "attachment"
	if r.URL.Query().Get("view") == "1" && it.viewable {
		disp = "inline"
		// A stored report is shown in a frame of our page: no scripts, no forms.
		w.Header().Set("Content-Security-Policy", "sandbox; default-src 'none'; img-src data:; style-src 'unsafe-inline'; frame-ancestors 'self'")
	}
	data := it.data
	if it.make != nil {
		var err error
		if data, err = it.make(); err != nil {
			http.Error(w, "allot: could not make "+it.name+": "+err.Error(), http.StatusInternalServerError)
			return
		}
	}
	w.Header().Set("Content-Type", it.contentType)
	w.Header().Set("Content-Disposition", fmt.Sprintf("%s; filename=%q", disp, it.name))
	w.Header().Set("Content-Length", strconv.Itoa(len(data)))
	_, _ = w.Write(data)
}

// parseForm parses a POSTed form; a body over the limit is answered with
// the form and a message.
func (s *Server) parseForm(w http.ResponseWriter, r *http.Request, name, title string, f *Form) bool {
	if err := r.ParseForm(); err != nil {
		status := http.StatusBadRequest
		var me *http.MaxBytesError
		if errors.As(err, &me) {
			status = http.StatusRequestEntityTooLarge
			f.Problem = fmt.Sprintf("The form is larger than %d KiB; shorten the lists.", me.Limit>>10)
		} else {
			f.Problem = "The form could not be read: " + err.Error()
		}
		s.render(w, status, name, page{Title: title, Form: f})
		return false
	}
	return true
}
