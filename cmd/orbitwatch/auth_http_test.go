package main

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// Tokens of the command tests: a reader known by the digest in the file,
// an admin written in clear.
const (
	authReadToken  = "reader-7Qm2Xc9LpV4nR8sT1wY6zB3dF5hJ0kA"
	authAdminToken = "admin-Hn4Jm7Kq2Ws9Ex5Rc8Tv1Yb6Uz3Ia0Op"
)

func writeTokens(t *testing.T) string {
	t.Helper()
	d := sha256.Sum256([]byte(authReadToken))
	path := filepath.Join(t.TempDir(), "api-tokens")
	body := "# role name credential\nread analyst sha256:" + hex.EncodeToString(d[:]) + "\nadmin oncall token:" + authAdminToken + "\n"
	if err := os.WriteFile(path, []byte(body), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestServeHTTPBeyondLoopbackNeedsCredential: serve and worker refuse an
// HTTP address beyond loopback without a credential, saying what to give,
// before they start anything; with a tokens file serve listens on every
// interface and answers token holders only, for this server's names only.
func TestServeHTTPBeyondLoopbackNeedsCredential(t *testing.T) {
	data := filepath.Join(t.TempDir(), "data")
	out, code := run(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "0.0.0.0:0")
	if code != 2 || !strings.Contains(out, "beyond loopback") || !strings.Contains(out, "--http-tokens FILE") || strings.Contains(out, "NATS ") {
		t.Fatalf("serve --http 0.0.0.0:0 without a credential: exit %d\n%s", code, out)
	}
	if _, err := os.Stat(filepath.Join(data, "nats")); err == nil {
		t.Error("the refused serve started its NATS server")
	}
	out, code = run(t, "worker", "--nats", "nats://127.0.0.1:1", "--data", filepath.Join(t.TempDir(), "w"), "--shard", "0", "--shards", "1", "--http", ":0")
	if code != 2 || !strings.Contains(out, "beyond loopback") || strings.Contains(out, "connect") {
		t.Fatalf("worker --http :0 without a credential: exit %d\n%s", code, out)
	}
	out, code = run(t, "worker", "--nats", "nats://127.0.0.1:1", "--data", filepath.Join(t.TempDir(), "w"), "--shard", "0", "--shards", "1",
		"--http", "127.0.0.1:0", "--http-client-ca", filepath.Join(t.TempDir(), "none.pem"))
	if code == 0 || !strings.Contains(out, "TLS") {
		t.Fatalf("worker --http-client-ca without --http-cert: exit %d\n%s", code, out)
	}

	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "0.0.0.0:0", "--http-tokens", writeTokens(t), "--http-host", "orbitwatch.payments.internal")
	base := srv.waitFor(t, "HTTP API ")
	port := base[strings.LastIndex(base, ":")+1:]
	local := "http://127.0.0.1:" + port
	if !strings.Contains(srv.output(), "warning: bearer tokens cross the network in clear") {
		t.Errorf("no warning about tokens over plain HTTP beyond loopback:\n%s", srv.output())
	}
	for _, c := range []struct {
		path, token, host string
		code              int
	}{
		{"/v1/status", "", "", 401},
		{"/v1/status", "wrong-token-of-sufficient-length-000000", "", 401},
		{"/v1/status", authReadToken, "", 200},
		{"/v1/status", authAdminToken, "", 200},
		{"/v1/catalog", authReadToken, "", 200},
		{"/healthz", "", "", 200},
		{"/", "", "", 200},
		{"/v1/status", authReadToken, "attacker.example", 421},
		{"/v1/status", authReadToken, "orbitwatch.payments.internal:" + port, 200},
	} {
		req, _ := http.NewRequest(http.MethodGet, local+c.path, nil)
		if c.token != "" {
			req.Header.Set("Authorization", "Bearer "+c.token)
		}
		if c.host != "" {
			req.Host = c.host
		}
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != c.code {
			t.Errorf("GET %s (token %.8q, host %q): %d %s, want %d", c.path, c.token, c.host, resp.StatusCode, body, c.code)
		}
	}
	// The page itself loads without a token; its first API read is
	// refused, and it asks for a token (headless Chromium).
	dom := string(headless(t, "--dump-dom", local+"/"))
	form := regexp.MustCompile(`<form id="token-form"[^>]*>`).FindString(dom)
	if form == "" || strings.Contains(form, "hidden") || !strings.Contains(dom, `id="token"`) {
		t.Errorf("the page does not ask for a token (form %q):\n%s", form, dom)
	}
	srv.stop(t)
}
