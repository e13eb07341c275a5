package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/signal"
	"runtime"
	"syscall"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/report/paper"
	"github.com/allotproject/allot/web"

	"github.com/spf13/cobra"
)

type serveOptions struct {
	addr        string
	open        bool
	allowRemote bool
	maxUpload   int64
	// ctx stops the server (nil: Ctrl-C or SIGTERM); ready, when set, is
	// told the address once the server listens. Both are for tests.
	ctx   context.Context
	ready func(addr string)
}

func newServeCmd(s *streams, runF func(*serveOptions) error) *cobra.Command {
	o := &serveOptions{}
	cmd := &cobra.Command{
		Use:   "serve [flags]",
		Short: "Serve the three steps as a local web page (size, layout, check and analysis)",
		Long: `Serve a small web site on this computer for people who prefer a browser to a
terminal: plan the size, lay out the trial (with the workbook, map, layout
JSON and, for a blind plan, the key to download), and check and analyse a
filled workbook; the layout page also offers the labels (labels.pdf, as
allot labels prints them; codes only for a blind plan). Every form field has the name of the flag it stands for and
every page shows the equivalent command. The same packages do the work.

The site listens on the loopback address (127.0.0.1:8722) and answers only
this computer; --allow-remote lets it listen on another address, which
exposes your data to the network: use it only on a network you trust.
Nothing is kept between requests except the files offered for download (in
memory, for an hour); an uploaded workbook is removed when its answer is
sent. Ctrl-C stops the server after the requests in flight are finished.` + "\n" + exitHelp,
		Example: `  # Start the site and open it in the default browser
  allot serve --open

  # Another port
  allot serve --addr 127.0.0.1:9000`,
		Args: cobra.NoArgs,
		RunE: func(c *cobra.Command, args []string) error {
			if err := o.validate(); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return serveRun(s, o)
		},
	}
	f := cmd.Flags()
	f.StringVar(&o.addr, "addr", "127.0.0.1:8722", "listen on `HOST:PORT` (a loopback address unless --allow-remote)")
	f.BoolVar(&o.open, "open", false, "open the site in the default browser")
	f.BoolVar(&o.allowRemote, "allow-remote", false, "allow a non-loopback --addr: other machines can then reach the site")
	f.Int64Var(&o.maxUpload, "max-upload", web.DefaultMaxUpload, "largest upload in `BYTES`")
	return cmd
}

func (o *serveOptions) validate() error {
	host, _, err := net.SplitHostPort(o.addr)
	if err != nil {
		return usagef("--addr %s: write HOST:PORT, for example 127.0.0.1:8722", o.addr)
	}
	if o.maxUpload < 1<<10 {
		return usagef("--max-upload %d: give at least 1024 bytes", o.maxUpload)
	}
	if !o.allowRemote && !isLoopback(host) {
		return usagef("--addr %s: not a loopback address, so other machines could reach the site; use 127.0.0.1, or add --allow-remote if that is what you want", o.addr)
	}
	return nil
}

// isLoopback reports whether host can only be reached from this computer.
func isLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

func serveRun(s *streams, o *serveOptions) error {
	srv, err := web.New(web.Config{Version: version.String(), MaxUpload: o.maxUpload, AllowRemote: o.allowRemote,
		Labels: serveLabels(time.Now)})
	if err != nil {
		return err
	}
	ln, err := net.Listen("tcp", o.addr)
	if err != nil {
		return inputErr(fmt.Errorf("--addr %s: %w (is another allot serve running? choose another port)", o.addr, err))
	}
	host, _, _ := net.SplitHostPort(o.addr)
	if !isLoopback(host) {
		fmt.Fprintf(s.Err, "allot serve: WARNING: listening on %s (--allow-remote): anyone who can reach this address can use the site and see what is entered\n", ln.Addr())
	}
	url := "http://" + ln.Addr().String() + "/"
	fmt.Fprintf(s.Err, "allot serve: open %s in a browser; press Ctrl-C to stop\n", url)
	ctx := o.ctx
	if ctx == nil {
		var stop context.CancelFunc
		ctx, stop = signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
		defer stop()
	}
	if o.ready != nil {
		o.ready(ln.Addr().String())
	}
	if o.open {
		if err := openBrowser(url); err != nil {
			fmt.Fprintf(s.Err, "allot serve: could not open a browser (%v); open %s yourself\n", err, url)
		}
	}
	err = srv.Serve(ctx, ln, 30*time.Second)
	if errors.Is(err, context.DeadlineExceeded) {
		return fmt.Errorf("allot serve: requests still running after 30 s were cut off")
	}
	if err != nil {
		return err
	}
	fmt.Fprintln(s.Err, "allot serve: stopped")
	return nil
}

// serveLabels is the layout page's labels.pdf: what allot labels prints by
// default (A4 sheets of preset a4-3x7, one label per unit, in measurement
// order when the plan has one). A blind plan's labels are always made from
// its sealed layout, so they show codes only, whatever layout is passed.
func serveLabels(now func() time.Time) web.Labels {
	return func(l design.Layout) ([]byte, error) {
		v := l.Sealed().View()
		sheet, ok := paper.PresetNamed("a4-3x7")
		if !ok {
			return nil, errors.New("allot serve: the label preset a4-3x7 is missing")
		}
		var b bytes.Buffer
		opt := paper.LabelOptions{Sheet: &sheet, ByMeasurement: v.Layout.Plan.Order, Created: now()}
		if err := paper.Labels(&b, v, opt); err != nil {
			return nil, err
		}
		return b.Bytes(), nil
	}
}

// openBrowser asks the desktop to open url.
func openBrowser(url string) error {
	var c *exec.Cmd
	switch runtime.GOOS {
	case "darwin":
		c = exec.Command("open", url)
	case "windows":
		c = exec.Command("rundll32", "url.dll,FileProtocolHandler", url)
	default:
		c = exec.Command("xdg-open", url)
	}
	if err := c.Start(); err != nil {
		return err
	}
	go func() { _ = c.Wait() }()
	return nil
}
