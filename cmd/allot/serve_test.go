package main

import (
	"bytes"
	"context"
	"io"
	"net/http"
	"strings"
	"testing"
	"time"
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
