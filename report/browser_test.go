//go:build browser

package report

// This test opens index.html in headless Chromium and asks the browser
// itself what a reader would get: every image decoded with a real size,
// nothing on the console, nothing fetched from the network, no sideways
// scrolling of the page on a phone-sized screen, and a print layout on a
// white ground that prints. It speaks the DevTools protocol over
// --remote-debugging-pipe (JSON messages ended by a NUL byte on file
// descriptors 3 and 4), so it needs no driver, no port and no new module.
//
// Run it with
//
//	go test -tags browser -run TestBrowser ./report/
//
// It is skipped only when no Chromium binary is found; set
// DELTAPROBE_CHROMIUM to use one elsewhere than /usr/bin/chromium, and
// DELTAPROBE_BROWSER_SHOTS to a folder to keep screenshots of the page.

import (
	"bufio"
	"context"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

func chromiumPath() string {
	if p := os.Getenv("DELTAPROBE_CHROMIUM"); p != "" {
		return p
	}
	for _, p := range []string{"/usr/bin/chromium", "/usr/bin/chromium-browser"} {
		if _, err := os.Stat(p); err == nil {
			return p
		}
	}
	if p, err := exec.LookPath("chromium"); err == nil {
		return p
	}
	return ""
}

// cdpMessage is a DevTools protocol message in either direction.
type cdpMessage struct {
	ID        int64           `json:"id,omitempty"`
	SessionID string          `json:"sessionId,omitempty"`
	Method    string          `json:"method,omitempty"`
	Params    json.RawMessage `json:"params,omitempty"`
	Result    json.RawMessage `json:"result,omitempty"`
	Error     *struct {
		Code    int    `json:"code"`
		Message string `json:"message"`
	} `json:"error,omitempty"`
}

// cdp is a minimal DevTools client over a pipe pair.
type cdp struct {
	w      *os.File
	mu     sync.Mutex
	nextID int64
	wait   map[int64]chan cdpMessage
	events chan cdpMessage
	done   chan struct{}
	err    error
}

func newCDP(w, r *os.File) *cdp {
	c := &cdp{w: w, wait: map[int64]chan cdpMessage{}, events: make(chan cdpMessage, 1024), done: make(chan struct{})}
	go c.read(r)
	return c
}

func (c *cdp) read(r *os.File) {
	defer close(c.done)
	br := bufio.NewReaderSize(r, 1<<20)
	for {
		b, err := br.ReadBytes(0)
		if err != nil {
			c.err = err
			return
		}
		var m cdpMessage
		if err := json.Unmarshal(b[:len(b)-1], &m); err != nil {
			c.err = fmt.Errorf("decoding a DevTools message: %w", err)
			return
		}
		if m.ID != 0 {
			c.mu.Lock()
			ch := c.wait[m.ID]
			delete(c.wait, m.ID)
			c.mu.Unlock()
			if ch != nil {
				ch <- m
			}
			continue
		}
		select {
		case c.events <- m:
		default: // a flood of events we do not read must not stall replies
		}
	}
}

// call sends a command and waits for its reply.
func (c *cdp) call(ctx context.Context, session, method string, params any, result any) error {
	c.mu.Lock()
	c.nextID++
	id := c.nextID
	ch := make(chan cdpMessage, 1)
	c.wait[id] = ch
	c.mu.Unlock()
	p, err := json.Marshal(params)
	if err != nil {
		return err
	}
	msg, err := json.Marshal(cdpMessage{ID: id, SessionID: session, Method: method, Params: p})
	if err != nil {
		return err
	}
	if _, err := c.w.Write(append(msg, 0)); err != nil {
		return fmt.Errorf("%s: %w", method, err)
	}
	select {
	case m := <-ch:
		if m.Error != nil {
			return fmt.Errorf("%s: %s (%d)", method, m.Error.Message, m.Error.Code)
		}
		if result != nil {
			return json.Unmarshal(m.Result, result)
		}
		return nil
	case <-c.done:
		return fmt.Errorf("%s: browser went away: %v", method, c.err)
	case <-ctx.Done():
		return fmt.Errorf("%s: %w", method, ctx.Err())
	}
}

// eval evaluates a JavaScript expression in the page and decodes its
// JSON-string value into out.
func (c *cdp) eval(ctx context.Context, session, expr string, out any) error {
	var res struct {
		Result struct {
			Value any `json:"value"`
		} `json:"result"`
		ExceptionDetails *struct {
			Text string `json:"text"`
		} `json:"exceptionDetails"`
	}
	err := c.call(ctx, session, "Runtime.evaluate", map[string]any{"expression": "JSON.stringify(" + expr + ")", "returnByValue": true}, &res)
	if err != nil {
		return err
	}
	if res.ExceptionDetails != nil {
		return fmt.Errorf("evaluating %q: %s", expr, res.ExceptionDetails.Text)
	}
	s, ok := res.Result.Value.(string)
	if !ok {
		return fmt.Errorf("evaluating %q: no value", expr)
	}
	return json.Unmarshal([]byte(s), out)
}

// browserProblems collects what the page must not do, from the events seen.
type browserProblems struct {
	mu   sync.Mutex
	list []string
}

func (p *browserProblems) add(s string) {
	p.mu.Lock()
	p.list = append(p.list, s)
	p.mu.Unlock()
}

func (p *browserProblems) all() []string {
	p.mu.Lock()
	defer p.mu.Unlock()
	return append([]string(nil), p.list...)
}

// watch reads events until ctx ends, noting console errors, exceptions,
// failed loads and any request that is not for a local file, and
// signalling loaded when the page's load event fires.
func watch(ctx context.Context, c *cdp, session string, pr *browserProblems, loaded chan<- struct{}) {
	for {
		var m cdpMessage
		select {
		case <-ctx.Done():
			return
		case m = <-c.events:
		}
		if m.SessionID != session {
			continue
		}
		switch m.Method {
		case "Page.loadEventFired":
			select {
			case loaded <- struct{}{}:
			default:
			}
		case "Runtime.consoleAPICalled":
			var p struct {
				Type string `json:"type"`
				Args []struct {
					Value       any    `json:"value"`
					Description string `json:"description"`
				} `json:"args"`
			}
			if json.Unmarshal(m.Params, &p) == nil && (p.Type == "error" || p.Type == "assert" || p.Type == "warning") {
				pr.add(fmt.Sprintf("console %s: %v", p.Type, p.Args))
			}
		case "Runtime.exceptionThrown":
			pr.add("exception: " + string(m.Params))
		case "Log.entryAdded":
			var p struct {
				Entry struct {
					Level, Text, URL string
				} `json:"entry"`
			}
			if json.Unmarshal(m.Params, &p) == nil && (p.Entry.Level == "error" || p.Entry.Level == "warning") {
				pr.add(fmt.Sprintf("log %s: %s %s", p.Entry.Level, p.Entry.Text, p.Entry.URL))
			}
		case "Network.requestWillBeSent":
			var p struct {
				Request struct{ URL string } `json:"request"`
			}
			if json.Unmarshal(m.Params, &p) == nil {
				u := p.Request.URL
				if !strings.HasPrefix(u, "file:") && !strings.HasPrefix(u, "data:") && !strings.HasPrefix(u, "about:") {
					pr.add("request to " + u)
				}
			}
		case "Network.loadingFailed":
			pr.add("load failed: " + string(m.Params))
		}
	}
}

// shot saves a full-page screenshot to $DELTAPROBE_BROWSER_SHOTS/name.png
// when that variable names a folder: a way to look at the page as the
// browser laid it out, at desktop, phone and print widths.
func shot(ctx context.Context, t *testing.T, c *cdp, session, name string) {
	t.Helper()
	dir := os.Getenv("DELTAPROBE_BROWSER_SHOTS")
	if dir == "" {
		return
	}
	var res struct {
		Data string `json:"data"`
	}
	if err := c.call(ctx, session, "Page.captureScreenshot", map[string]any{"format": "png", "captureBeyondViewport": true}, &res); err != nil {
		t.Errorf("screenshot %s: %v", name, err)
		return
	}
	b, err := base64.StdEncoding.DecodeString(res.Data)
	if err == nil {
		err = os.WriteFile(filepath.Join(dir, name+".png"), b, 0o644)
	}
	if err != nil {
		t.Errorf("screenshot %s: %v", name, err)
	}
}

// pageReport is what the browser made of a page.
type pageReport struct {
	images []struct {
		Src      string `json:"src"`
		Natural  [2]int `json:"natural"`
		Declared [2]int `json:"declared"`
		Complete bool   `json:"complete"`
	}
	phoneScroll, phoneWidest int // CSS pixels, at phoneWidth
	printScroll              int // CSS pixels, at printWidth
	printDark                []string
	pdf                      bool
	problems                 []string
}

const (
	phoneWidth = 390
	printWidth = 680 // CSS pixels: A4 less the page's 1.5 cm margins
)

// inspect loads the page at path in a fresh headless Chromium and reports
// on it.
func inspect(ctx context.Context, t *testing.T, bin, path string) pageReport {
	t.Helper()
	var rep pageReport
	ctx, cancel := context.WithTimeout(ctx, 60*time.Second)
	defer cancel()
	toR, toW, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	fromR, fromW, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.CommandContext(ctx, bin,
		"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-extensions", "--disable-default-apps", "--no-default-browser-check",
		"--user-data-dir="+t.TempDir(), "--remote-debugging-pipe", "about:blank")
	cmd.ExtraFiles = []*os.File{toR, fromW} // the browser's fd 3 and fd 4
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatalf("starting %s: %v", bin, err)
	}
	toR.Close()
	fromW.Close()
	defer func() {
		toW.Close()
		cancel()
		cmd.Wait()
	}()
	c := newCDP(toW, fromR)
	fail := func(format string, args ...any) {
		t.Helper()
		t.Fatalf(format+"\nbrowser stderr:\n%s", append(args, stderr.String())...)
	}

	var target struct {
		TargetID string `json:"targetId"`
	}
	if err := c.call(ctx, "", "Target.createTarget", map[string]any{"url": "about:blank"}, &target); err != nil {
		fail("%v", err)
	}
	var attached struct {
		SessionID string `json:"sessionId"`
	}
	if err := c.call(ctx, "", "Target.attachToTarget", map[string]any{"targetId": target.TargetID, "flatten": true}, &attached); err != nil {
		fail("%v", err)
	}
	s := attached.SessionID
	var pr browserProblems
	loaded := make(chan struct{}, 1)
	go watch(ctx, c, s, &pr, loaded)
	for _, m := range []string{"Page.enable", "Runtime.enable", "Log.enable", "Network.enable"} {
		if err := c.call(ctx, s, m, map[string]any{}, nil); err != nil {
			fail("%v", err)
		}
	}
	u := url.URL{Scheme: "file", Path: path}
	if err := c.call(ctx, s, "Page.navigate", map[string]any{"url": u.String()}, nil); err != nil {
		fail("%v", err)
	}
	select {
	case <-loaded:
	case <-ctx.Done():
		fail("the page did not finish loading: %v", ctx.Err())
	}

	js := `Array.from(document.images).map(i => ({src: i.getAttribute("src"), natural: [i.naturalWidth, i.naturalHeight],
		declared: [Number(i.getAttribute("width")), Number(i.getAttribute("height"))], complete: i.complete}))`
	if err := c.eval(ctx, s, js, &rep.images); err != nil {
		fail("%v", err)
	}
	if err := c.call(ctx, s, "Emulation.setDeviceMetricsOverride", map[string]any{"width": 1280, "height": 900, "deviceScaleFactor": 1, "mobile": false}, nil); err != nil {
		fail("%v", err)
	}
	shot(ctx, t, c, s, "desktop")

	if err := c.call(ctx, s, "Emulation.setDeviceMetricsOverride", map[string]any{"width": phoneWidth, "height": 844, "deviceScaleFactor": 2, "mobile": true}, nil); err != nil {
		fail("%v", err)
	}
	var widths struct {
		Scroll int     `json:"scroll"`
		Widest float64 `json:"widest"`
	}
	if err := c.eval(ctx, s, `({scroll: document.documentElement.scrollWidth,
		widest: Math.max(0, ...Array.from(document.images).map(i => i.getBoundingClientRect().width))})`, &widths); err != nil {
		fail("%v", err)
	}
	rep.phoneScroll, rep.phoneWidest = widths.Scroll, int(widths.Widest+0.5)
	shot(ctx, t, c, s, "phone")
	if err := c.call(ctx, s, "Emulation.clearDeviceMetricsOverride", map[string]any{}, nil); err != nil {
		fail("%v", err)
	}

	if err := c.call(ctx, s, "Emulation.setEmulatedMedia", map[string]any{"media": "print"}, nil); err != nil {
		fail("%v", err)
	}
	if err := c.call(ctx, s, "Emulation.setDeviceMetricsOverride", map[string]any{"width": printWidth, "height": 1000, "deviceScaleFactor": 1, "mobile": false}, nil); err != nil {
		fail("%v", err)
	}
	shot(ctx, t, c, s, "print")
	if err := c.eval(ctx, s, `document.documentElement.scrollWidth`, &rep.printScroll); err != nil {
		fail("%v", err)
	}
	if err := c.call(ctx, s, "Emulation.clearDeviceMetricsOverride", map[string]any{}, nil); err != nil {
		fail("%v", err)
	}
	// A ground is dark when its luminance (0–255) is under 200.
	if err := c.eval(ctx, s, `Array.from(document.querySelectorAll("*")).filter(e => {
		const m = getComputedStyle(e).backgroundColor.match(/[\d.]+/g);
		if (!m) return false;
		const [r, g, b, a] = m.map(Number);
		if (a === 0) return false;
		return 0.2126*r + 0.7152*g + 0.0722*b < 200;
	}).map(e => e.tagName + "." + e.className)`, &rep.printDark); err != nil {
		fail("%v", err)
	}
	var pdf struct {
		Data string `json:"data"`
	}
	if err := c.call(ctx, s, "Page.printToPDF", map[string]any{"printBackground": true}, &pdf); err != nil {
		fail("%v", err)
	}
	b, err := base64.StdEncoding.DecodeString(pdf.Data)
	rep.pdf = err == nil && strings.HasPrefix(string(b), "%PDF")

	// Let late events arrive, then take what was seen.
	time.Sleep(200 * time.Millisecond)
	rep.problems = pr.all()
	if err := c.call(ctx, "", "Browser.close", map[string]any{}, nil); err != nil && !errors.Is(err, context.Canceled) {
		t.Logf("closing the browser: %v", err)
	}
	return rep
}

func TestBrowser(t *testing.T) {
	bin := chromiumPath()
	if bin == "" {
		t.Skip("no Chromium binary (looked for /usr/bin/chromium, chromium-browser and chromium on PATH; DELTAPROBE_CHROMIUM unset): install the Debian package chromium to run this test")
	}
	r := storedRun(t, "run-small")
	dir := t.TempDir()
	if err := Write(dir, r); err != nil {
		t.Fatal(err)
	}
	page, err := filepath.Abs(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	rep := inspect(context.Background(), t, bin, page)
	checkRendered(t, rep, 2*len(r.Study.Transforms))
}

// TestBrowserPlan holds a plan's page to the same checks as the run's.
// Its screenshots, when kept, go to a folder "plan" inside
// $DELTAPROBE_BROWSER_SHOTS so they do not overwrite the run page's.
func TestBrowserPlan(t *testing.T) {
	bin := chromiumPath()
	if bin == "" {
		t.Skip("no Chromium binary (looked for /usr/bin/chromium, chromium-browser and chromium on PATH; DELTAPROBE_CHROMIUM unset): install the Debian package chromium to run this test")
	}
	if shots := os.Getenv("DELTAPROBE_BROWSER_SHOTS"); shots != "" {
		sub := filepath.Join(shots, "plan")
		if err := os.MkdirAll(sub, 0o755); err != nil {
			t.Fatal(err)
		}
		t.Setenv("DELTAPROBE_BROWSER_SHOTS", sub)
	}
	s, p := storedPlan(t, planCases[0].dir)
	dir := t.TempDir()
	if err := WritePlan(dir, p); err != nil {
		t.Fatal(err)
	}
	page, err := filepath.Abs(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	rep := inspect(context.Background(), t, bin, page)
	checkRendered(t, rep, len(s.Transforms))
}

// checkRendered holds what the browser made of a page to what a reader
// needs: wantImages images, each decoded at its declared size; no
// sideways scrolling on a phone; a print layout on a white ground that
// fits the paper and prints; and nothing reported by the browser.
func checkRendered(t *testing.T, rep pageReport, wantImages int) {
	t.Helper()
	if len(rep.images) != wantImages {
		t.Errorf("%d images rendered, want %d", len(rep.images), wantImages)
	}
	for _, im := range rep.images {
		if !im.Complete || im.Natural[0] == 0 || im.Natural[1] == 0 {
			t.Errorf("image %s did not render: natural size %v", im.Src, im.Natural)
		} else if im.Natural != im.Declared {
			t.Errorf("image %s is %v pixels but the page declares %v", im.Src, im.Natural, im.Declared)
		}
	}
	// On a phone the page itself never scrolls sideways: wide tables
	// scroll inside their own box, and images shrink to fit.
	if rep.phoneScroll > phoneWidth+1 {
		t.Errorf("at %d CSS pixels wide the page is %d wide: it scrolls sideways", phoneWidth, rep.phoneScroll)
	}
	if rep.phoneWidest > phoneWidth {
		t.Errorf("at %d CSS pixels wide an image is %d wide", phoneWidth, rep.phoneWidest)
	}
	if len(rep.printDark) > 0 {
		t.Errorf("in print, these have a dark background: %v", rep.printDark)
	}
	// In print nothing scrolls, so nothing may be wider than the paper.
	if rep.printScroll > printWidth+1 {
		t.Errorf("printed %d CSS pixels wide, the page is %d wide: tables or figures would be cut", printWidth, rep.printScroll)
	}
	if !rep.pdf {
		t.Error("printing gave no PDF")
	}
	for _, p := range rep.problems {
		t.Errorf("browser reported: %s", p)
	}
}

// The checks above must be able to fail: a page with a missing image, a
// console error, a request off the machine (to a closed local port) and a
// dark print background is caught on every count.
func TestBrowserCatchesFaults(t *testing.T) {
	bin := chromiumPath()
	if bin == "" {
		t.Skip("no Chromium binary: install the Debian package chromium to run this test")
	}
	dir := t.TempDir()
	bad := `<!DOCTYPE html><html><head><meta name="viewport" content="width=device-width" />
<style>@media print { body { background: #222; } }</style></head>
<body><img src="missing.png" width="10" height="10" alt="" />
<img src="http://127.0.0.1:9/x.png" alt="" />
<div style="width: 2000px">wide</div>
<script>console.error("boom")</script></body></html>`
	path := filepath.Join(dir, "bad.html")
	if err := os.WriteFile(path, []byte(bad), 0o644); err != nil {
		t.Fatal(err)
	}
	rep := inspect(context.Background(), t, bin, path)
	broken := 0
	for _, im := range rep.images {
		if im.Natural[0] == 0 {
			broken++
		}
	}
	if broken != 2 {
		t.Errorf("%d broken images seen, want 2", broken)
	}
	if rep.phoneScroll <= phoneWidth {
		t.Errorf("a 2000px-wide block was not seen to scroll the page (width %d)", rep.phoneScroll)
	}
	if len(rep.printDark) == 0 {
		t.Error("a dark print background was not seen")
	}
	joined := strings.Join(rep.problems, "\n")
	for _, want := range []string{"console error", "request to http://127.0.0.1:9/x.png"} {
		if !strings.Contains(joined, want) {
			t.Errorf("problems %q do not include %q", rep.problems, want)
		}
	}
}
