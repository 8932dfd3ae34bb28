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
// DELTAPROBE_CHROMIUM to use one elsewhere than /usr/bin/chromium.

import (
	"bufio"
	"context"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
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

func TestBrowser(t *testing.T) {
	bin := chromiumPath()
	if bin == "" {
		t.Skip("no Chromium binary (looked for /usr/bin/chromium, chromium-browser and chromium on PATH; DELTAPROBE_CHROMIUM unset): install the Debian package chromium to run this test")
	}
	r := runStudy(t, studyFuel)
	dir := t.TempDir()
	if err := Write(dir, r); err != nil {
		t.Fatal(err)
	}
	page, err := filepath.Abs(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}

	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
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
	if err := c.call(ctx, s, "Page.navigate", map[string]any{"url": "file://" + page}, nil); err != nil {
		fail("%v", err)
	}
	select {
	case <-loaded:
	case <-ctx.Done():
		fail("the page did not finish loading: %v", ctx.Err())
	}

	// Every image decoded, at the size the page declares.
	var imgs []struct {
		Src      string `json:"src"`
		Natural  [2]int `json:"natural"`
		Declared [2]int `json:"declared"`
		Complete bool   `json:"complete"`
	}
	js := `Array.from(document.images).map(i => ({src: i.getAttribute("src"), natural: [i.naturalWidth, i.naturalHeight],
		declared: [Number(i.getAttribute("width")), Number(i.getAttribute("height"))], complete: i.complete}))`
	if err := c.eval(ctx, s, js, &imgs); err != nil {
		fail("%v", err)
	}
	if len(imgs) != 2*len(r.Study.Transforms) {
		t.Errorf("%d images rendered, want %d", len(imgs), 2*len(r.Study.Transforms))
	}
	for _, im := range imgs {
		if !im.Complete || im.Natural[0] == 0 || im.Natural[1] == 0 {
			t.Errorf("image %s did not render: natural size %v", im.Src, im.Natural)
		} else if im.Natural != im.Declared {
			t.Errorf("image %s is %v pixels but the page declares %v", im.Src, im.Natural, im.Declared)
		}
	}

	// On a phone-sized screen the page itself never scrolls sideways;
	// wide tables scroll inside their own box, and images shrink to fit.
	const phone = 390
	if err := c.call(ctx, s, "Emulation.setDeviceMetricsOverride", map[string]any{"width": phone, "height": 844, "deviceScaleFactor": 2, "mobile": true}, nil); err != nil {
		fail("%v", err)
	}
	var widths struct {
		Scroll int `json:"scroll"`
		Widest int `json:"widest"`
	}
	if err := c.eval(ctx, s, `({scroll: document.documentElement.scrollWidth,
		widest: Math.max(...Array.from(document.images).map(i => i.getBoundingClientRect().width))})`, &widths); err != nil {
		fail("%v", err)
	}
	if widths.Scroll > phone+1 {
		t.Errorf("at %d CSS pixels wide the page is %d wide: it scrolls sideways", phone, widths.Scroll)
	}
	if widths.Widest > phone {
		t.Errorf("at %d CSS pixels wide an image is %d wide", phone, widths.Widest)
	}
	if err := c.call(ctx, s, "Emulation.clearDeviceMetricsOverride", map[string]any{}, nil); err != nil {
		fail("%v", err)
	}

	// In print, nothing sits on a dark ground, and the page prints.
	if err := c.call(ctx, s, "Emulation.setEmulatedMedia", map[string]any{"media": "print"}, nil); err != nil {
		fail("%v", err)
	}
	var dark []string
	if err := c.eval(ctx, s, `Array.from(document.querySelectorAll("*")).filter(e => {
		const m = getComputedStyle(e).backgroundColor.match(/[\d.]+/g);
		if (!m) return false;
		const [r, g, b, a] = m.map(Number);
		if (a === 0) return false;
		return 0.2126*r + 0.7152*g + 0.0722*b < 200;
	}).map(e => e.tagName + "." + e.className)`, &dark); err != nil {
		fail("%v", err)
	}
	if len(dark) > 0 {
		t.Errorf("in print, these have a dark background: %v", dark)
	}
	var pdf struct {
		Data string `json:"data"`
	}
	if err := c.call(ctx, s, "Page.printToPDF", map[string]any{"printBackground": true}, &pdf); err != nil {
		fail("%v", err)
	}
	if b, err := base64.StdEncoding.DecodeString(pdf.Data); err != nil || !strings.HasPrefix(string(b), "%PDF") {
		t.Errorf("printing gave no PDF (%d bytes of base64, %v)", len(pdf.Data), err)
	}

	// Let late events arrive, then look at what was seen.
	time.Sleep(200 * time.Millisecond)
	for _, p := range pr.all() {
		t.Errorf("browser reported: %s", p)
	}
	if err := c.call(ctx, "", "Browser.close", map[string]any{}, nil); err != nil && !errors.Is(err, context.Canceled) {
		t.Logf("closing the browser: %v", err)
	}
}
