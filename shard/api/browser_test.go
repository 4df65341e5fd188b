package api

import (
	"bufio"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io"
	"orbitwatch/bench"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// browser is headless Chromium driven over the DevTools protocol on a
// pipe (--remote-debugging-pipe: JSON messages ending in a zero byte, the
// browser reading file descriptor 3 and writing 4), so the page tests
// need no WebSocket client and no package beyond the standard library.
// One page (a target attached in flat mode) at 1280×800.
type browser struct {
	t       *testing.T
	cmd     *exec.Cmd
	in      io.WriteCloser
	session string

	mu      sync.Mutex
	next    int
	waiting map[int]chan cdpReply
	events  chan cdpEvent
}

type cdpReply struct {
	Result json.RawMessage `json:"result"`
	Error  *struct {
		Message string `json:"message"`
	} `json:"error"`
}

type cdpEvent struct {
	Method string          `json:"method"`
	Params json.RawMessage `json:"params"`
}

// chromium finds Debian's chromium; the test fails without it.
func chromium(t *testing.T) string {
	t.Helper()
	p, err := bench.Chromium()
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// newBrowser starts Chromium and opens one page; the test's end stops it.
func newBrowser(t *testing.T) *browser {
	t.Helper()
	toChrome, fromTest, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	toTest, fromChrome, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(chromium(t), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync", "--disable-extensions",
		"--user-data-dir="+t.TempDir(), "--window-size=1280,800", "--remote-debugging-pipe", "about:blank")
	cmd.ExtraFiles = []*os.File{toChrome, fromChrome} // descriptors 3 and 4
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	toChrome.Close()
	fromChrome.Close()
	b := &browser{t: t, cmd: cmd, in: fromTest, waiting: map[int]chan cdpReply{}, events: make(chan cdpEvent, 256)}
	go b.read(toTest)
	t.Cleanup(func() {
		b.in.Close()
		done := make(chan struct{})
		go func() { cmd.Wait(); close(done) }()
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			cmd.Process.Kill()
			<-done
		}
		if t.Failed() && stderr.Len() > 0 {
			t.Logf("chromium stderr (tail): %s", tail(stderr.String(), 2000))
		}
	})
	var target struct{ TargetID string }
	b.do("", "Target.createTarget", map[string]any{"url": "about:blank"}, &target)
	var att struct{ SessionID string }
	b.do("", "Target.attachToTarget", map[string]any{"targetId": target.TargetID, "flatten": true}, &att)
	b.session = att.SessionID
	b.call("Page.enable", nil, nil)
	b.call("Runtime.enable", nil, nil)
	b.call("Emulation.setDeviceMetricsOverride", map[string]any{"width": 1280, "height": 800, "deviceScaleFactor": 1, "mobile": false}, nil)
	// Headless Chromium otherwise shows a scroll bar at the first mouse
	// press, narrowing the page under the pointer between press and
	// release.
	b.call("Emulation.setScrollbarsHidden", map[string]any{"hidden": true}, nil)
	return b
}

func tail(s string, n int) string {
	if len(s) > n {
		return "…" + s[len(s)-n:]
	}
	return s
}

func (b *browser) read(r io.Reader) {
	br := bufio.NewReaderSize(r, 1<<20)
	for {
		msg, err := br.ReadBytes(0)
		if err != nil {
			b.mu.Lock()
			for id, ch := range b.waiting {
				close(ch)
				delete(b.waiting, id)
			}
			b.mu.Unlock()
			return
		}
		var m struct {
			ID int `json:"id"`
			cdpReply
			cdpEvent
		}
		if json.Unmarshal(msg[:len(msg)-1], &m) != nil {
			continue
		}
		if m.ID == 0 {
			select {
			case b.events <- m.cdpEvent:
			default: // nobody listens for most events
			}
			continue
		}
		b.mu.Lock()
		ch := b.waiting[m.ID]
		delete(b.waiting, m.ID)
		b.mu.Unlock()
		if ch != nil {
			ch <- m.cdpReply
		}
	}
}

// do sends one command (to the page's session, or the browser when
// session is "") and decodes its result into out.
func (b *browser) do(session, method string, params any, out any) {
	b.t.Helper()
	b.mu.Lock()
	b.next++
	id := b.next
	ch := make(chan cdpReply, 1)
	b.waiting[id] = ch
	b.mu.Unlock()
	msg := map[string]any{"id": id, "method": method}
	if params != nil {
		msg["params"] = params
	}
	if session != "" {
		msg["sessionId"] = session
	}
	body, _ := json.Marshal(msg)
	if _, err := b.in.Write(append(body, 0)); err != nil {
		b.t.Fatalf("devtools %s: %v", method, err)
	}
	select {
	case r, ok := <-ch:
		if !ok {
			b.t.Fatalf("devtools %s: the browser went away", method)
		}
		if r.Error != nil {
			b.t.Fatalf("devtools %s: %s", method, r.Error.Message)
		}
		if out != nil {
			if err := json.Unmarshal(r.Result, out); err != nil {
				b.t.Fatalf("devtools %s: %v", method, err)
			}
		}
	case <-time.After(30 * time.Second):
		b.t.Fatalf("devtools %s: no answer", method)
	}
}

func (b *browser) call(method string, params any, out any) {
	b.t.Helper()
	b.do(b.session, method, params, out)
}

// open loads u and waits for its load event.
func (b *browser) open(u string) {
	b.t.Helper()
	b.call("Page.navigate", map[string]any{"url": u}, nil)
	b.waitFor(`document.readyState === "complete"`)
}

// eval evaluates a JavaScript expression in the page (awaiting a promise)
// and decodes its value into out.
func (b *browser) eval(expr string, out any) {
	b.t.Helper()
	var r struct {
		Result struct {
			Value json.RawMessage `json:"value"`
		} `json:"result"`
		ExceptionDetails *struct {
			Text      string `json:"text"`
			Exception struct {
				Description string `json:"description"`
			} `json:"exception"`
		} `json:"exceptionDetails"`
	}
	b.call("Runtime.evaluate", map[string]any{"expression": expr, "awaitPromise": true, "returnByValue": true}, &r)
	if r.ExceptionDetails != nil {
		b.t.Fatalf("page script %q: %s %s", expr, r.ExceptionDetails.Text, r.ExceptionDetails.Exception.Description)
	}
	if out != nil && len(r.Result.Value) > 0 {
		if err := json.Unmarshal(r.Result.Value, out); err != nil {
			b.t.Fatalf("page script %q: %v (%s)", expr, err, r.Result.Value)
		}
	}
}

func (b *browser) str(expr string) string {
	b.t.Helper()
	var s string
	b.eval(expr, &s)
	return s
}

func (b *browser) num(expr string) float64 {
	b.t.Helper()
	var f float64
	b.eval(expr, &f)
	return f
}

// waitFor polls a JavaScript condition until it is true, for up to 15 s.
func (b *browser) waitFor(cond string) {
	b.t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	for {
		var ok bool
		// A page between two loads has no elements yet: not ready.
		b.eval("(() => { try { return !!("+cond+"); } catch (e) { return false; } })()", &ok)
		if ok {
			return
		}
		if time.Now().After(deadline) {
			b.t.Fatalf("page: waited 15 s for %s; the page shows:\n%s", cond, tail(b.str("document.body.innerText"), 3000))
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// key presses one key (as a person at a keyboard does: key down, the
// character, key up) in whatever holds the focus.
func (b *browser) key(name string) {
	b.t.Helper()
	codes := map[string]int{"Tab": 9, "Enter": 13, "Space": 32}
	code := codes[name]
	down := map[string]any{"type": "keyDown", "key": name, "code": name, "windowsVirtualKeyCode": code}
	switch name {
	case "Enter":
		down["text"] = "\r"
	case "Space":
		down["key"], down["text"] = " ", " "
	}
	b.call("Input.dispatchKeyEvent", down, nil)
	b.call("Input.dispatchKeyEvent", map[string]any{"type": "keyUp", "key": down["key"], "code": name, "windowsVirtualKeyCode": code}, nil)
}

// typeText types s into whatever holds the focus.
func (b *browser) typeText(s string) {
	b.t.Helper()
	b.call("Input.insertText", map[string]any{"text": s}, nil)
}

// click clicks with the mouse at the middle of the first element matching
// the CSS selector, scrolled into view.
func (b *browser) click(selector string) {
	b.t.Helper()
	var box struct{ X, Y float64 }
	b.eval(fmt.Sprintf(`(() => { const e = document.querySelector(%q); if (!e) return null; e.scrollIntoView({block: "center"}); const r = e.getBoundingClientRect(); return {x: r.left + r.width / 2, y: r.top + r.height / 2}; })()`, selector), &box)
	if box.X == 0 && box.Y == 0 {
		b.t.Fatalf("page: nothing to click at %s", selector)
	}
	b.call("Input.dispatchMouseEvent", map[string]any{"type": "mouseMoved", "x": box.X, "y": box.Y, "button": "none"}, nil)
	b.call("Input.dispatchMouseEvent", map[string]any{"type": "mousePressed", "x": box.X, "y": box.Y, "button": "left", "buttons": 1, "clickCount": 1}, nil)
	b.call("Input.dispatchMouseEvent", map[string]any{"type": "mouseReleased", "x": box.X, "y": box.Y, "button": "left", "buttons": 0, "clickCount": 1}, nil)
}

// screenshot saves the page as a PNG under $ORBITWATCH_SCREENSHOTS (or the
// test's temporary directory) and returns its path.
func (b *browser) screenshot(name string, full bool) string {
	b.t.Helper()
	params := map[string]any{"format": "png"}
	if full {
		params["captureBeyondViewport"] = true
		var h float64
		b.eval("document.documentElement.scrollHeight", &h)
		params["clip"] = map[string]any{"x": 0, "y": 0, "width": 1280, "height": h, "scale": 1}
	}
	return b.capture(name, params)
}

// screenshotOf saves the element matching selector, drawn at twice the
// size, as screenshot does.
func (b *browser) screenshotOf(selector, name string) string {
	b.t.Helper()
	var r struct{ X, Y, W, H float64 }
	b.eval(fmt.Sprintf(`(() => { const e = document.querySelector(%q); const r = e.getBoundingClientRect(); return {x: r.left + scrollX, y: r.top + scrollY, w: r.width, h: r.height}; })()`, selector), &r)
	return b.capture(name, map[string]any{"format": "png", "captureBeyondViewport": true, "clip": map[string]any{"x": r.X, "y": r.Y, "width": r.W, "height": r.H, "scale": 2}})
}

func (b *browser) capture(name string, params map[string]any) string {
	b.t.Helper()
	var r struct{ Data string }
	b.call("Page.captureScreenshot", params, &r)
	png, err := base64.StdEncoding.DecodeString(r.Data)
	if err != nil || len(png) < 10000 {
		b.t.Fatalf("screenshot %s: %d bytes, %v", name, len(png), err)
	}
	dir := os.Getenv("ORBITWATCH_SCREENSHOTS")
	if dir == "" {
		dir = b.t.TempDir()
	}
	path := filepath.Join(dir, name+".png")
	if err := os.WriteFile(path, png, 0o644); err != nil {
		b.t.Fatal(err)
	}
	return path
}
