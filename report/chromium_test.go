package report

import (
	"bufio"
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// The browser test drives Debian's Chromium through the DevTools protocol
// over --remote-debugging-pipe (messages are JSON objects ended by a NUL
// byte; the browser reads fd 3 and writes fd 4), with a minimal client
// written here on the standard library. It records every console message,
// uncaught exception, log entry and network request the page causes.

const chromiumPath = "/usr/bin/chromium"

// cdp is a DevTools-protocol connection to one browser process.
type cdp struct {
	w      *os.File
	mu     sync.Mutex
	nextID int
	wait   map[int]chan cdpMsg
	events chan cdpMsg
}

type cdpMsg struct {
	ID        int             `json:"id,omitempty"`
	Method    string          `json:"method,omitempty"`
	SessionID string          `json:"sessionId,omitempty"`
	Params    json.RawMessage `json:"params,omitempty"`
	Result    json.RawMessage `json:"result,omitempty"`
	Error     *struct {
		Code    int    `json:"code"`
		Message string `json:"message"`
	} `json:"error,omitempty"`
}

func (c *cdp) readLoop(r *os.File) {
	br := bufio.NewReader(r)
	for {
		b, err := br.ReadBytes(0)
		if err != nil {
			close(c.events)
			return
		}
		var m cdpMsg
		if json.Unmarshal(b[:len(b)-1], &m) != nil {
			continue
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
		c.events <- m
	}
}

// call sends a command and waits for its answer.
func (c *cdp) call(ctx context.Context, session, method string, params any, result any) error {
	c.mu.Lock()
	c.nextID++
	id := c.nextID
	ch := make(chan cdpMsg, 1)
	c.wait[id] = ch
	c.mu.Unlock()
	msg := map[string]any{"id": id, "method": method}
	if params != nil {
		msg["params"] = params
	}
	if session != "" {
		msg["sessionId"] = session
	}
	b, err := json.Marshal(msg)
	if err != nil {
		return err
	}
	if _, err := c.w.Write(append(b, 0)); err != nil {
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
	case <-ctx.Done():
		return fmt.Errorf("%s: %w", method, ctx.Err())
	}
}

// pageRun is what loading a page in the browser showed.
type pageRun struct {
	Console  []string // console messages of level error or warning, and uncaught exceptions
	Log      []string // browser log entries of level error or warning (CSP, failed loads)
	Requests []string // URLs of every request the page made
	DOM      domFacts
	PNG      []byte
}

type domFacts struct {
	Scripts  int      `json:"scripts"`
	Sections []string `json:"sections"`
	Images   []bool   `json:"images"` // decoded with a positive natural width
	Painted  int      `json:"painted"`
	Text     string   `json:"text"`
	Height   float64  `json:"height"`
	// Tops maps each section id to its top edge in page pixels.
	Tops map[string]float64 `json:"tops"`
	// Probe is the value of the probe expression chromiumProbe was given.
	Probe json.RawMessage `json:"probe"`
}

// chromiumLoad opens file in headless Chromium at 1280 px wide and reports
// what happened; print selects the print media type.
func chromiumLoad(t *testing.T, file string, print bool) pageRun {
	t.Helper()
	return chromiumProbe(t, file, print, "null")
}

// chromiumProbe is chromiumLoad that also evaluates the JavaScript
// expression probe on the settled page, its value in DOM.Probe.
func chromiumProbe(t *testing.T, file string, print bool, probe string) pageRun {
	t.Helper()
	return chromiumProbeAt(t, file, print, 1280, probe)
}

// chromiumProbeAt is chromiumProbe in a window width px wide.
func chromiumProbeAt(t *testing.T, file string, print bool, width int, probe string) pageRun {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	profile := t.TempDir()
	inR, inW, err := os.Pipe() // browser reads commands from fd 3
	if err != nil {
		t.Fatal(err)
	}
	outR, outW, err := os.Pipe() // and writes answers to fd 4
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.CommandContext(ctx, chromiumPath,
		"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-extensions", "--disable-default-apps", "--hide-scrollbars", "--mute-audio",
		"--user-data-dir="+profile, "--remote-debugging-pipe", "about:blank")
	cmd.ExtraFiles = []*os.File{inR, outW}
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatalf("starting chromium: %v", err)
	}
	inR.Close()
	outW.Close()
	c := &cdp{w: inW, wait: map[int]chan cdpMsg{}, events: make(chan cdpMsg, 4096)}
	go c.readLoop(outR)
	defer func() {
		_ = c.call(ctx, "", "Browser.close", nil, nil)
		inW.Close()
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			_ = cmd.Process.Kill()
			<-done
		}
		outR.Close()
	}()
	fail := func(err error) {
		t.Helper()
		t.Fatalf("%v\nchromium stderr:\n%s", err, stderr.String())
	}

	var created struct {
		TargetID string `json:"targetId"`
	}
	if err := c.call(ctx, "", "Target.createTarget", map[string]any{"url": "about:blank"}, &created); err != nil {
		fail(err)
	}
	var attached struct {
		SessionID string `json:"sessionId"`
	}
	if err := c.call(ctx, "", "Target.attachToTarget", map[string]any{"targetId": created.TargetID, "flatten": true}, &attached); err != nil {
		fail(err)
	}
	s := attached.SessionID
	for _, m := range []string{"Page.enable", "Runtime.enable", "Log.enable", "Network.enable"} {
		if err := c.call(ctx, s, m, nil, nil); err != nil {
			fail(err)
		}
	}
	if err := c.call(ctx, s, "Emulation.setDeviceMetricsOverride", map[string]any{
		"width": width, "height": 1000, "deviceScaleFactor": 1, "mobile": false}, nil); err != nil {
		fail(err)
	}
	if print {
		if err := c.call(ctx, s, "Emulation.setEmulatedMedia", map[string]any{"media": "print"}, nil); err != nil {
			fail(err)
		}
	}
	url := "file://" + file
	if err := c.call(ctx, s, "Page.navigate", map[string]any{"url": url}, nil); err != nil {
		fail(err)
	}

	var run pageRun
	record := func(m cdpMsg) (loaded bool) {
		if m.SessionID != s {
			return false
		}
		switch m.Method {
		case "Page.loadEventFired":
			return true
		case "Runtime.consoleAPICalled":
			var p struct {
				Type string `json:"type"`
				Args []struct {
					Value any `json:"value"`
				} `json:"args"`
			}
			_ = json.Unmarshal(m.Params, &p)
			if p.Type == "error" || p.Type == "warning" || p.Type == "assert" {
				run.Console = append(run.Console, fmt.Sprintf("%s %v", p.Type, p.Args))
			}
		case "Runtime.exceptionThrown":
			run.Console = append(run.Console, "exception "+string(m.Params))
		case "Log.entryAdded":
			var p struct {
				Entry struct {
					Level, Text, URL string
				} `json:"entry"`
			}
			_ = json.Unmarshal(m.Params, &p)
			if p.Entry.Level == "error" || p.Entry.Level == "warning" {
				run.Log = append(run.Log, p.Entry.Level+": "+p.Entry.Text+" "+p.Entry.URL)
			}
		case "Network.requestWillBeSent":
			var p struct {
				Request struct {
					URL string `json:"url"`
				} `json:"request"`
			}
			_ = json.Unmarshal(m.Params, &p)
			run.Requests = append(run.Requests, p.Request.URL)
		}
		return false
	}
	for loaded := false; !loaded; {
		select {
		case m, ok := <-c.events:
			if !ok {
				fail(fmt.Errorf("chromium closed the pipe before the page loaded"))
			}
			loaded = record(m)
		case <-ctx.Done():
			fail(fmt.Errorf("page did not load: %w", ctx.Err()))
		}
	}
	// Let the page settle (fonts, image decoding) and collect late events.
	var ev struct {
		Result struct {
			Value string `json:"value"`
		} `json:"result"`
	}
	facts := `new Promise(done => requestAnimationFrame(() => requestAnimationFrame(() => done(JSON.stringify({
		scripts: document.scripts.length,
		sections: [...document.querySelectorAll('section')].map(s => s.id),
		images: [...document.images].map(i => i.complete && i.naturalWidth > 0),
		painted: document.querySelectorAll('.painted mark').length,
		text: document.body.innerText,
		tops: Object.fromEntries([...document.querySelectorAll('section')].map(s => [s.id, s.getBoundingClientRect().top + window.scrollY])),
		height: document.documentElement.scrollHeight,
		probe: (` + probe + `)})))))`
	if err := c.call(ctx, s, "Runtime.evaluate", map[string]any{"expression": facts, "awaitPromise": true, "returnByValue": true}, &ev); err != nil {
		fail(err)
	}
	if err := json.Unmarshal([]byte(ev.Result.Value), &run.DOM); err != nil {
		fail(fmt.Errorf("page facts %q: %w", ev.Result.Value, err))
	}
	var shot struct {
		Data string `json:"data"`
	}
	h := min(run.DOM.Height, 32000)
	if err := c.call(ctx, s, "Page.captureScreenshot", map[string]any{"format": "png", "captureBeyondViewport": true,
		"clip": map[string]any{"x": 0, "y": 0, "width": width, "height": h, "scale": 1}}, &shot); err != nil {
		fail(err)
	}
	if run.PNG, err = base64.StdEncoding.DecodeString(shot.Data); err != nil {
		fail(err)
	}
	for drained := false; !drained; {
		select {
		case m, ok := <-c.events:
			if !ok {
				drained = true
				break
			}
			record(m)
		default:
			drained = true
		}
	}
	return run
}

// needChromium skips when the browser is missing, except in CI.
func needChromium(t *testing.T) {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("%s is missing and CI=true: install Debian's chromium (apt-get install chromium)", chromiumPath)
		}
		t.Skipf("SKIPPED: %s is missing (apt-get install chromium); with CI=true this test fails instead", chromiumPath)
	}
	if testing.Short() {
		t.Skip("SKIPPED in -short mode: the browser test starts Chromium")
	}
}

// TestChromiumLoadsReport opens a report of the demo fixture, with hostile
// texts added, in headless Chromium: no console error, no request other
// than the file itself, no script element, every image decoded, every
// section present, the hostile texts shown as text. It saves a screenshot
// in the test's temporary folder; with $TELLTALE_REPORT_PNG set it also
// writes the top 4,000 pixels of the page there and the cue audit next to
// it (name-audit.png).
func TestChromiumLoadsReport(t *testing.T) {
	needChromium(t)
	in := screenshotInput(t)
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	file := filepath.Join(dir, "report.html")
	if err := WriteFile(file, r); err != nil {
		t.Fatal(err)
	}
	for _, print := range []bool{false, true} {
		run := chromiumLoad(t, file, print)
		what := map[bool]string{false: "screen", true: "print"}[print]
		if len(run.Console) > 0 {
			t.Errorf("%s: console errors: %q", what, run.Console)
		}
		if len(run.Log) > 0 {
			t.Errorf("%s: browser log: %q", what, run.Log)
		}
		for _, u := range run.Requests {
			if u != "file://"+file && !strings.HasPrefix(u, "data:") {
				t.Errorf("%s: request to %q", what, u)
			}
		}
		if run.DOM.Scripts != 0 {
			t.Errorf("%s: %d script elements in the DOM", what, run.DOM.Scripts)
		}
		if got, want := strings.Join(run.DOM.Sections, ","), "data,recipe,metrics,filters,audit,examples,caution"; got != want {
			t.Errorf("%s: sections %s, want %s", what, got, want)
		}
		if len(run.DOM.Images) < 2 {
			t.Errorf("%s: %d images, want the confusion matrix and the reliability diagram", what, len(run.DOM.Images))
		}
		for i, ok := range run.DOM.Images {
			if !ok {
				t.Errorf("%s: image %d did not decode", what, i)
			}
		}
		if run.DOM.Painted == 0 {
			t.Errorf("%s: no painted tokens", what)
		}
		if in.Examples[len(in.Examples)-1].Text == hostileText && !strings.Contains(run.DOM.Text, hostileText) {
			t.Errorf("%s: the hostile example text is not shown as text", what)
		}
		name := filepath.Join(dir, "report-"+what+".png")
		if err := os.WriteFile(name, run.PNG, 0o644); err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: %d bytes of PNG in %s, page height %.0f px", what, len(run.PNG), name, run.DOM.Height)
		if dst := os.Getenv("TELLTALE_REPORT_PNG"); dst != "" && !print {
			// The top of the page, and the cue audit beside it.
			saveCrop(t, run.PNG, 0, 4000, dst)
			saveCrop(t, run.PNG, int(run.DOM.Tops["audit"]), 3600, strings.TrimSuffix(dst, ".png")+"-audit.png")
		}
	}
}

// TestChromiumDetects is the control of the browser test: a page that makes
// a request and logs a console error must be caught by the same recorder.
func TestChromiumDetects(t *testing.T) {
	needChromium(t)
	file := filepath.Join(t.TempDir(), "bad.html")
	page := `<!DOCTYPE html><html><head><title>x</title></head><body><p>x</p>` +
		`<img src="http://127.0.0.1:9/missing.png"><script>console.error("planted error")</script></body></html>`
	if err := os.WriteFile(file, []byte(page), 0o644); err != nil {
		t.Fatal(err)
	}
	run := chromiumLoad(t, file, false)
	if !strings.Contains(strings.Join(run.Console, "\n"), "planted error") {
		t.Errorf("console error not caught; console %q", run.Console)
	}
	found := false
	for _, u := range run.Requests {
		found = found || strings.HasPrefix(u, "http://127.0.0.1:9/")
	}
	if !found {
		t.Errorf("network request not caught; requests %q", run.Requests)
	}
	if run.DOM.Scripts != 1 {
		t.Errorf("%d scripts counted, want 1", run.DOM.Scripts)
	}
}

// saveCrop writes rows [top, top+height) of the PNG page to path.
func saveCrop(t *testing.T, page []byte, top, height int, path string) {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(page))
	if err != nil {
		t.Fatal(err)
	}
	b := img.Bounds()
	r := image.Rect(b.Min.X, b.Min.Y+top, b.Max.X, min(b.Max.Y, b.Min.Y+top+height))
	sub, ok := img.(interface {
		SubImage(image.Rectangle) image.Image
	})
	if !ok || r.Empty() {
		t.Fatalf("cannot crop %v from a %v page", r, b)
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, sub.SubImage(r)); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("saved %s (%d×%d)", path, r.Dx(), r.Dy())
}
