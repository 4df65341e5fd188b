package api

import (
	"io/fs"
	"net/http"
	"regexp"
	"strings"
	"testing"
)

// TestWebPage checks that the page and its files are served from the
// binary and that none of them reaches outside it (the machines are
// offline): no http(s) URL but the SVG namespace name. The page's look and
// behaviour are checked in headless Chromium by the command's tests.
func TestWebPage(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	h := New(v, Options{})
	for path, want := range map[string]string{"/": "text/html", "/ui/app.js": "javascript", "/ui/style.css": "text/css"} {
		code, hdr, body := get(t, h, path)
		if code != http.StatusOK || !strings.Contains(hdr.Get("Content-Type"), want) || len(body) == 0 {
			t.Fatalf("GET %s: %d %q, %d bytes", path, code, hdr.Get("Content-Type"), len(body))
		}
	}
	_, _, page := get(t, h, "/")
	for _, s := range []string{`<label for="node-id">`, `src="/ui/app.js"`, `href="/ui/style.css"`, `id="recent"`, `id="token-form" hidden`} {
		if !strings.Contains(string(page), s) {
			t.Errorf("page lacks %s", s)
		}
	}
	// Inline scripts and styles would be refused by the guard's
	// Content-Security-Policy (default-src 'self').
	if regexp.MustCompile(`<script>|<style|\sstyle="|\son[a-z]+="`).Match(page) {
		t.Errorf("page has inline script or style, which the Content-Security-Policy refuses")
	}
	url := regexp.MustCompile(`https?://[^"'\s)]+`)
	fs.WalkDir(webFiles, "web", func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, _ := webFiles.ReadFile(p)
		for _, u := range url.FindAllString(string(b), -1) {
			if u != "http://www.w3.org/2000/svg" {
				t.Errorf("%s refers to %s", p, u)
			}
		}
		return nil
	})
	if code, _, _ := get(t, h, "/ui/missing.js"); code != http.StatusNotFound {
		t.Fatalf("missing asset: %d", code)
	}
}
