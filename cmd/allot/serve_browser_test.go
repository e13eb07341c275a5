package main

import (
	"bytes"
	"context"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/power/sim"

	"github.com/chromedp/cdproto/browser"
	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"
)

// TestServeInBrowser starts allot serve on a free loopback port, drives
// headless Chromium through the three pages as a person would, and checks
// that each page's answer is what the command shown on the page prints with
// --json; it downloads the workbook through the browser and checks it with
// allot check, and takes a screenshot of every page. Set
// ALLOT_SCREENSHOTS=DIR to keep the screenshots (docs/serve-*.png come from
// here).
func TestServeInBrowser(t *testing.T) {
	if testing.Short() {
		t.Skip("browser test: skipped with -short")
	}
	chrome := ""
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			chrome = p
			break
		}
	}
	if chrome == "" {
		t.Skip("browser test: no Chromium found (Debian package chromium); skipping")
	}
	work := t.TempDir()
	t.Chdir(work)
	downloads := filepath.Join(work, "downloads")
	if err := os.Mkdir(downloads, 0o755); err != nil {
		t.Fatal(err)
	}
	shots := os.Getenv("ALLOT_SCREENSHOTS")

	// allot serve, in process, on a free port.
	ctx, stop := context.WithCancel(context.Background())
	ready := make(chan string, 1)
	served := make(chan error, 1)
	var serveErr bytes.Buffer
	go func() {
		o := &serveOptions{addr: "127.0.0.1:0", maxUpload: 8 << 20, ctx: ctx, ready: func(a string) { ready <- a }}
		served <- serveRun(&streams{In: strings.NewReader(""), Out: &bytes.Buffer{}, Err: &serveErr}, o)
	}()
	var base string
	select {
	case a := <-ready:
		base = "http://" + a
	case err := <-served:
		t.Fatalf("allot serve did not start: %v\n%s", err, serveErr.String())
	}
	defer func() {
		stop()
		if err := <-served; err != nil {
			t.Errorf("allot serve: %v", err)
		}
	}()

	opts := append(chromedp.DefaultExecAllocatorOptions[:], chromedp.ExecPath(chrome), chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.WindowSize(1024, 1366)) // a tablet, portrait
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancelA()
	bctx, cancelB := chromedp.NewContext(actx)
	defer cancelB()
	if err := chromedp.Do(bctx, chromedp.Navigate(base+"/")); err != nil {
		t.Skipf("browser test: Chromium at %s did not start: %v", chrome, err)
	}
	if _, err := chromedp.CallBrowser(bctx, browser.SetDownloadBehavior, browser.SetDownloadBehaviorParams{
		Behavior: browser.SetDownloadBehaviorBehaviorAllow, DownloadPath: downloads}); err != nil {
		t.Fatal(err)
	}
	step := func(t *testing.T, name string, steps ...chromedp.Action[chromedp.Void]) {
		t.Helper()
		c, cancel := context.WithTimeout(bctx, 20*time.Second)
		defer cancel()
		if err := chromedp.Do(c, steps...); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
	}
	text := func(t *testing.T, sel string) string {
		t.Helper()
		v, err := chromedp.Run(bctx, chromedp.TextContent(chromedp.CSS(sel)))
		if err != nil {
			t.Fatalf("text of %s: %v", sel, err)
		}
		return v
	}
	screenshot := func(t *testing.T, name string) {
		t.Helper()
		b, err := chromedp.Run(bctx, chromedp.FullScreenshot(100))
		if err != nil {
			t.Fatalf("screenshot %s: %v", name, err)
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("screenshot %s: %v", name, err)
		}
		if r := inkRatio(img); r < 0.02 {
			t.Errorf("screenshot %s is blank: %.4f of its pixels are not background", name, r)
		}
		if shots != "" {
			top, err := chromedp.Run(bctx, chromedp.CaptureScreenshot())
			if err != nil {
				t.Fatal(err)
			}
			for suffix, data := range map[string][]byte{"": b, "-top": top} {
				if err := os.WriteFile(filepath.Join(shots, "serve-"+name+suffix+".png"), data, 0o644); err != nil {
					t.Error(err)
				}
			}
		}
	}
	// a11y checks what a screen reader and a tablet need: one h1, a label
	// for every control, text for every image and frame, and no page wider
	// than the window.
	a11y := func(t *testing.T, name string) {
		t.Helper()
		problems, err := chromedp.Run(bctx, chromedp.Evaluate[[]string](`(() => {
			const p = [];
			if (document.querySelectorAll("h1").length !== 1) p.push("not exactly one h1");
			if (!document.documentElement.lang) p.push("no lang");
			for (const e of document.querySelectorAll("input:not([type=hidden]), select, textarea")) {
				if (!e.id || !document.querySelector('label[for="' + e.id + '"]')) p.push("control without label: " + (e.name || e.outerHTML));
			}
			for (const e of document.querySelectorAll("img")) if (!e.alt) p.push("image without alt: " + e.src.slice(0, 40));
			for (const e of document.querySelectorAll("iframe")) if (!e.title) p.push("frame without title");
			if (document.documentElement.scrollWidth > window.innerWidth) p.push("page wider than the window: " + document.documentElement.scrollWidth + " > " + window.innerWidth);
			return p;
		})()`))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for _, p := range problems {
			t.Errorf("%s: %s", name, p)
		}
		// A tablet held upright (768 CSS pixels wide) reads without
		// scrolling sideways too.
		step(t, "portrait", chromedp.EmulateViewport(768, 1024))
		wide, err := chromedp.Run(bctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth`))
		step(t, "landscape", chromedp.ResetViewport())
		if err != nil || wide {
			t.Errorf("%s: wider than a 768-pixel tablet (%v)", name, err)
		}
	}
	// cli runs the command shown on a page with extra arguments.
	cli := func(t *testing.T, command string, extra ...string) (string, int) {
		t.Helper()
		args := shellWords(t, command)
		if args[0] != "allot" {
			t.Fatalf("command %q does not start with allot", command)
		}
		var out, errb bytes.Buffer
		code := run(append(args[1:], extra...), strings.NewReader(""), &out, &errb)
		if code != 0 && code != 1 {
			t.Fatalf("%s: exit %d\n%s", command, code, errb.String())
		}
		return out.String(), code
	}

	t.Run("home", func(t *testing.T) {
		step(t, "home", chromedp.Navigate(base+"/"), chromedp.WaitVisible(chromedp.CSS(`a[href="/size"]`)))
		a11y(t, "home")
		screenshot(t, "home")
	})

	t.Run("size", func(t *testing.T) {
		step(t, "invalid alpha", chromedp.Navigate(base+"/size"),
			chromedp.SetValue(chromedp.CSS("#groups"), "4"), chromedp.SetValue(chromedp.CSS("#f"), "0.25"),
			chromedp.SetValue(chromedp.CSS("#alpha"), "1.5"),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#alpha-error")))
		if msg := text(t, "#alpha-error"); !strings.Contains(msg, "between 0 and 1") {
			t.Errorf("alpha error %q", msg)
		}
		a11y(t, "size with an error")
		screenshot(t, "size-error")
		step(t, "size", chromedp.SetValue(chromedp.CSS("#alpha"), "0.05"), chromedp.SetValue(chromedp.CSS("#power"), "0.9"),
			chromedp.SetValue(chromedp.CSS("#dropout"), "0.1"),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#answer")))
		cmd := text(t, "#size-command")
		if cmd != "allot size --dropout 0.1 --f 0.25 --groups 4 --power 0.9" {
			t.Errorf("command on the page: %q", cmd)
		}
		want, _ := cli(t, cmd, "--json")
		// The answer records its command, which on the command line also
		// holds the output flag --json.
		want = strings.Replace(want, `"command": "`+strings.Replace(cmd, "--groups 4", "--groups 4 --json", 1), `"command": "`+cmd, 1)
		if got := text(t, "#answer-json"); got != want {
			t.Errorf("page JSON differs from %s --json:\npage:\n%s\ncli:\n%s", cmd, got, want)
		}
		a11y(t, "size")
		screenshot(t, "size")

		// The planner's inputs of an ethics application: the study's words,
		// named groups with a control, one-sided Dunnett comparisons.
		step(t, "size for an ethics form", chromedp.Navigate(base+"/size"),
			chromedp.SetValue(chromedp.CSS("#response"), "weight gain"), chromedp.SetValue(chromedp.CSS("#unit"), "g"),
			chromedp.SetValue(chromedp.CSS("#subjects"), "animals"), chromedp.SetValue(chromedp.CSS("#sd-source"), "pilot study, 8 mice"),
			chromedp.SetValue(chromedp.CSS("#effect-reason"), "a gain of 2 g changes the welfare assessment"),
			chromedp.SetValue(chromedp.CSS("#levels"), "vehicle,low,high"), chromedp.SetValue(chromedp.CSS("#control"), "vehicle"),
			chromedp.SetValue(chromedp.CSS("#groups"), "3"), chromedp.SetValue(chromedp.CSS("#diff"), "2"), chromedp.SetValue(chromedp.CSS("#sd"), "2"),
			chromedp.SetValue(chromedp.CSS("#compare"), "dunnett"), chromedp.SetValue(chromedp.CSS("#direction"), "higher"),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#answer")))
		cmd = text(t, "#size-command")
		for _, flag := range []string{"--compare dunnett", "--control vehicle", "--direction higher", "--levels vehicle,low,high",
			"--subjects animals", "--sd-source 'pilot study, 8 mice'", "--response 'weight gain'", "--unit g"} {
			if !strings.Contains(cmd, flag) {
				t.Errorf("command on the page %q lacks %s", cmd, flag)
			}
		}
		want, _ = cli(t, cmd, "--json")
		want = strings.Replace(want, " --json", "", 1)
		if got := text(t, "#answer-json"); got != want {
			t.Errorf("page JSON differs from %s --json:\npage:\n%s\ncli:\n%s", cmd, got, want)
		}
		if j := text(t, "#justification"); !strings.Contains(j, "vehicle") || !strings.Contains(j, "animals") {
			t.Errorf("justification without the study's words:\n%s", j)
		}
		a11y(t, "size for an ethics form")
	})

	// The forms need no script: only the copy buttons do, and they stay
	// hidden without it.
	t.Run("without JavaScript", func(t *testing.T) {
		if _, err := chromedp.Call(bctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: true}); err != nil {
			t.Fatal(err)
		}
		defer chromedp.Call(bctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: false})
		step(t, "navigate", chromedp.Navigate(base+"/size"))
		step(t, "groups", chromedp.SendKeys(chromedp.CSS("#groups"), "3"))
		step(t, "f", chromedp.SendKeys(chromedp.CSS("#f"), "0.4"))
		step(t, "click", chromedp.Click(chromedp.CSS("button.primary")))
		step(t, "answer", chromedp.WaitVisible(chromedp.CSS("#answer")))
		hidden, err := chromedp.Run(bctx, chromedp.AttributeValue(chromedp.CSS("button.copy"), "hidden"))
		if err != nil || !hidden.Exists {
			t.Errorf("the copy button shows without script (%v)", err)
		}
		want, _ := cli(t, "allot size --f 0.4 --groups 3 --json")
		want = strings.Replace(want, "--groups 3 --json", "--groups 3", 1)
		if got := text(t, "#answer-json"); got != want {
			t.Errorf("page JSON without script differs:\n%s", got)
		}
	})

	var workbookPath string
	t.Run("layout", func(t *testing.T) {
		step(t, "layout", chromedp.Navigate(base+"/layout"),
			chromedp.SetValue(chromedp.CSS("#title"), "Feed trial"),
			chromedp.SetValue(chromedp.CSS("#factor"), "feed=F0,F1,F2,F3"),
			chromedp.SetValue(chromedp.CSS("#design"), "rcbd"),
			chromedp.SetValue(chromedp.CSS("#blocks"), "4"),
			chromedp.SetValue(chromedp.CSS("#block-name"), "bench"),
			chromedp.SetValue(chromedp.CSS("#grid"), "2x2"),
			chromedp.SetValue(chromedp.CSS("#response"), "height_cm:0..200"),
			chromedp.SetValue(chromedp.CSS("#seed"), "42"),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#layout-summary")))
		cmd := text(t, "#layout-command")
		want, _ := cli(t, cmd, "--json")
		if got := text(t, "#layout-json"); got != want {
			t.Errorf("page JSON differs from %s --json:\npage:\n%s\ncli:\n%s", cmd, got, want)
		}
		a11y(t, "layout")
		screenshot(t, "layout")
		step(t, "download", chromedp.Click(chromedp.CSS(`a[download$=".xlsx"]`)))
		workbookPath = waitFile(t, filepath.Join(downloads, "feed-trial.xlsx"))
		step(t, "labels", chromedp.Click(chromedp.CSS(`a[download="labels.pdf"]`)))
		if b, err := os.ReadFile(waitFile(t, filepath.Join(downloads, "labels.pdf"))); err != nil || !bytes.HasPrefix(b, []byte("%PDF-")) {
			t.Errorf("labels.pdf from the layout page is no PDF (%v)", err)
		}
		out, code := cli(t, "allot check "+workbookPath)
		if code != 0 || !strings.Contains(out, "no values have been entered yet") {
			t.Errorf("allot check on the downloaded workbook: exit %d\n%s", code, out)
		}
		// The same fingerprint as the workbook the command wrote.
		cliOut, _ := cli(t, "allot check feed-trial.xlsx --json")
		pageOut, _ := cli(t, "allot check "+workbookPath, "--json")
		if fp := jsonField(cliOut, "plan_fingerprint"); fp == "" || fp != jsonField(pageOut, "plan_fingerprint") {
			t.Errorf("plan fingerprints differ: command %q, page %q", fp, jsonField(pageOut, "plan_fingerprint"))
		}
	})

	// A blind plan: the key is offered once, in the format allot layout
	// --key writes, and the blind workbook is analysed with it. Codes come
	// from a secret drawn anew each run, so the page and the command agree
	// on the plan, the allocation the seed gives and which units share a
	// code, not on the codes themselves.
	var blindWorkbook, keyPath string
	t.Run("blind", func(t *testing.T) {
		step(t, "blind layout", chromedp.Navigate(base+"/layout"),
			chromedp.SetValue(chromedp.CSS("#title"), "Dose study"),
			chromedp.SetValue(chromedp.CSS("#factor"), "dose=0,10,30"),
			chromedp.SetValue(chromedp.CSS("#reps"), "4"),
			chromedp.SetValue(chromedp.CSS("#response"), "score:0..10"),
			chromedp.SetValue(chromedp.CSS("#seed"), "2026"),
			chromedp.SetValue(chromedp.CSS("#blind"), "treatment"),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#download-key")))
		if w := text(t, "#key-warning"); !strings.Contains(w, "only once") {
			t.Errorf("key warning %q", w)
		}
		cmd := text(t, "#layout-command")
		if !strings.Contains(cmd, "--blind treatment") || !strings.Contains(cmd, "--key dose-study-key.json") || !strings.Contains(cmd, "--seed 2026") {
			t.Errorf("command %q", cmd)
		}
		want, _ := cli(t, cmd, "--json")
		page := text(t, "#layout-json")
		if strings.Contains(page, `"seed": 2026`) || strings.Contains(text(t, "#layout-summary"), "2026") {
			t.Error("the page shows the seed of a blind plan")
		}
		sameSealed(t, page, want)
		href, err := chromedp.Run(bctx, chromedp.AttributeValue(chromedp.CSS("#download-key"), "href"))
		if err != nil {
			t.Fatal(err)
		}
		step(t, "download key", chromedp.Click(chromedp.CSS("#download-key")), chromedp.Click(chromedp.CSS(`a[download$=".xlsx"]`)))
		keyPath = waitFile(t, filepath.Join(downloads, "dose-study-key.json"))
		blindWorkbook = waitFile(t, filepath.Join(downloads, "dose-study.xlsx"))
		step(t, "key again", chromedp.Navigate(base+href.Value), chromedp.WaitVisible(chromedp.CSS("h1")))
		if h := text(t, "h1"); h != "This download is gone" {
			t.Errorf("second key download: %q", h)
		}
		// The page's key has the command's format and content but for the
		// secret and the codes drawn from it.
		pageKey, cliKey := readKeyFile(t, keyPath), readKeyFile(t, "dose-study-key.json")
		if pageKey.Secret == cliKey.Secret {
			t.Error("the page and the command drew the same secret")
		}
		if a, b := keyWithoutSecret(pageKey), keyWithoutSecret(cliKey); !reflect.DeepEqual(a, b) {
			t.Errorf("key from the page differs from the command's beyond its secret:\n%+v\n%+v", a, b)
		}
		// Each key unblinds its own workbook, to the same allocation.
		for _, c := range [][2]string{{blindWorkbook, keyPath}, {"dose-study.xlsx", "dose-study-key.json"}} {
			if out, code := cli(t, "allot unblind "+c[0]+" --key "+c[1]); code != 0 || !strings.Contains(out, "one code per treatment") {
				t.Errorf("allot unblind %s --key %s: exit %d\n%s", c[0], c[1], code, out)
			}
		}
		if a, b := allocation(t, blindWorkbook, pageKey), allocation(t, "dose-study.xlsx", cliKey); !reflect.DeepEqual(a, b) {
			t.Errorf("allocations differ for seed 2026:\npage    %v\ncommand %v", a, b)
		}
		if _, err := workbook.Read(blindWorkbook, workbook.ReadOptions{Key: &cliKey}); err == nil {
			t.Error("the command's key unblinds the page's workbook")
		}
	})

	t.Run("check blind", func(t *testing.T) {
		if blindWorkbook == "" {
			t.Skip("no blind workbook")
		}
		fl, err := workbook.Read(blindWorkbook, workbook.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		ys := make([]float64, len(fl.Layout.Units))
		for i := range ys {
			ys[i] = float64(3 + i%5)
		}
		filled := filepath.Join(work, "blind-filled.xlsx")
		if err := workbook.Fill(blindWorkbook, filled, [][]float64{ys}, "SIMULATED for the browser test", false); err != nil {
			t.Fatal(err)
		}
		step(t, "check without key", chromedp.Navigate(base+"/check"),
			chromedp.SetUploadFiles(chromedp.CSS("#file"), []string{filled}),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#analysis-note")))
		if n := text(t, "#analysis-note"); !strings.Contains(n, "unblinding key") {
			t.Errorf("note %q", n)
		}
		// A fresh form: the answer page's nodes may still be changing.
		step(t, "check with key", chromedp.Navigate(base+"/check"), chromedp.WaitVisible(chromedp.CSS("#key")),
			chromedp.SetUploadFiles(chromedp.CSS("#file"), []string{filled}),
			chromedp.SetUploadFiles(chromedp.CSS("#key"), []string{keyPath}),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("iframe.report")))
		cmd := text(t, "#analyze-command")
		if err := os.Rename(filled, "blind-filled.xlsx"); err != nil {
			t.Fatal(err)
		}
		if err := os.Rename(keyPath, "blind-key.json"); err != nil {
			t.Fatal(err)
		}
		cmd = strings.Replace(cmd, "dose-study-key.json", "blind-key.json", 1)
		want, _ := cli(t, cmd, "--json")
		if got := text(t, "#analysis-json-0"); got != want {
			t.Errorf("analysis JSON differs from %s --json:\npage:\n%s\ncli:\n%s", cmd, got, want)
		}
	})

	t.Run("check", func(t *testing.T) {
		if workbookPath == "" {
			t.Skip("no workbook from the layout page")
		}
		fl, err := workbook.Read(workbookPath, workbook.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		ys, err := sim.Responses(fl.Layout, sim.Model{Means: []float64{50, 54, 58, 61}, SD: 4, BlockSD: 3, Decimals: 1}, 11)
		if err != nil {
			t.Fatal(err)
		}
		filled := filepath.Join(work, "filled.xlsx")
		if err := workbook.Fill(workbookPath, filled, [][]float64{ys}, "SIMULATED for the browser test", false); err != nil {
			t.Fatal(err)
		}
		step(t, "check", chromedp.Navigate(base+"/check"),
			chromedp.SetUploadFiles(chromedp.CSS("#file"), []string{filled}),
			chromedp.Click(chromedp.CSS("button.primary")), chromedp.WaitVisible(chromedp.CSS("#check-verdict")))
		if v := text(t, "#check-verdict"); !strings.Contains(v, "the data can be analysed") {
			t.Errorf("verdict %q", v)
		}
		want, _ := cli(t, "allot check filled.xlsx --json")
		if got := text(t, "#check-json"); got != want {
			t.Errorf("check JSON differs from allot check --json:\npage:\n%s\ncli:\n%s", got, want)
		}
		cmd := text(t, "#analyze-command")
		want, _ = cli(t, cmd, "--json")
		if got := text(t, "#analysis-json-0"); got != want {
			t.Errorf("analysis JSON differs from %s --json:\npage:\n%s\ncli:\n%s", cmd, got, want)
		}
		step(t, "report", chromedp.WaitVisible(chromedp.CSS("iframe.report")), chromedp.Sleep(500*time.Millisecond))
		a11y(t, "check")
		screenshot(t, "check")
	})
}

// sameSealed compares two sealed layout JSON documents: the plan and every
// unit's place agree, and two units share a code in one exactly when they
// do in the other.
func sameSealed(t *testing.T, got, want string) {
	t.Helper()
	a, err := design.DecodeLayout([]byte(got))
	if err != nil {
		t.Fatalf("page JSON: %v", err)
	}
	b, err := design.DecodeLayout([]byte(want))
	if err != nil {
		t.Fatalf("command JSON: %v", err)
	}
	if !a.IsSealed() || !b.IsSealed() {
		t.Fatalf("not sealed: page %v, command %v", a.IsSealed(), b.IsSealed())
	}
	if a.Plan.Fingerprint() != b.Plan.Fingerprint() || !reflect.DeepEqual(a.Plan, b.Plan) || len(a.Units) != len(b.Units) {
		t.Fatalf("plans differ:\npage\n%s\ncommand\n%s", got, want)
	}
	ab, ba := map[string]string{}, map[string]string{} // page code → command code and back
	for i := range a.Units {
		u, v := a.Units[i], b.Units[i]
		if x, ok := ab[u.Code]; ok && x != v.Code {
			t.Errorf("unit %s: page code %s goes with command codes %s and %s", u.ID, u.Code, x, v.Code)
		}
		if x, ok := ba[v.Code]; ok && x != u.Code {
			t.Errorf("unit %s: command code %s goes with page codes %s and %s", v.ID, v.Code, x, u.Code)
		}
		ab[u.Code], ba[v.Code] = v.Code, u.Code
		u.Code, v.Code = "", ""
		if u != v {
			t.Errorf("unit %d: page %+v, command %+v", i, a.Units[i], b.Units[i])
		}
	}
}

func readKeyFile(t *testing.T, path string) design.Key {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	k, err := design.ParseKey(b)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return k
}

// keyWithoutSecret is k without what its secret decides.
func keyWithoutSecret(k design.Key) design.Key {
	k.Secret, k.MAC, k.Codes = "", "", nil
	k.Units = append([]design.KeyUnit(nil), k.Units...)
	for i := range k.Units {
		k.Units[i].Code = ""
	}
	return k
}

// allocation reads a blind workbook with its key: each unit's treatment.
func allocation(t *testing.T, path string, key design.Key) map[string]string {
	t.Helper()
	fl, err := workbook.Read(path, workbook.ReadOptions{Key: &key})
	if err != nil {
		t.Fatalf("%s with its key: %v", path, err)
	}
	names := fl.Layout.Plan.Treatments()
	out := map[string]string{}
	for _, u := range fl.Layout.Units {
		out[u.ID] = names[u.Treatment].Name
	}
	return out
}

// inkRatio is the share of sampled pixels that differ from the top-left
// (background) pixel.
func inkRatio(img image.Image) float64 {
	b := img.Bounds()
	r0, g0, b0, _ := img.At(b.Min.X, b.Min.Y).RGBA()
	n, ink := 0, 0
	for y := b.Min.Y; y < b.Max.Y; y += 3 {
		for x := b.Min.X; x < b.Max.X; x += 3 {
			r, g, bl, _ := img.At(x, y).RGBA()
			n++
			if r != r0 || g != g0 || bl != b0 {
				ink++
			}
		}
	}
	return float64(ink) / float64(n)
}

// waitFile waits for a download to complete.
func waitFile(t *testing.T, path string) string {
	t.Helper()
	for range 200 {
		if st, err := os.Stat(path); err == nil && st.Size() > 0 {
			if _, err := os.Stat(path + ".crdownload"); os.IsNotExist(err) {
				return path
			}
		}
		time.Sleep(50 * time.Millisecond)
	}
	entries, _ := os.ReadDir(filepath.Dir(path))
	t.Fatalf("download %s did not arrive (folder holds %v)", path, entries)
	return ""
}

// shellWords splits a command as shown on a page: words separated by
// spaces, single quotes as options.ShellQuote writes them.
func shellWords(t *testing.T, s string) []string {
	t.Helper()
	var out []string
	var cur strings.Builder
	inWord, quoted := false, false
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case quoted && c == '\'':
			quoted = false
		case quoted:
			cur.WriteByte(c)
		case c == '\'':
			quoted, inWord = true, true
		case c == '\\' && i+1 < len(s):
			i++
			cur.WriteByte(s[i])
			inWord = true
		case c == ' ' || c == '\n' || c == '\t':
			if inWord {
				out = append(out, cur.String())
				cur.Reset()
				inWord = false
			}
		default:
			cur.WriteByte(c)
			inWord = true
		}
	}
	if quoted {
		t.Fatalf("unbalanced quote in %q", s)
	}
	if inWord {
		out = append(out, cur.String())
	}
	return out
}

func jsonField(doc, key string) string {
	i := strings.Index(doc, `"`+key+`": "`)
	if i < 0 {
		return ""
	}
	rest := doc[i+len(key)+5:]
	j := strings.IndexByte(rest, '"')
	if j < 0 {
		return ""
	}
	return rest[:j]
}
