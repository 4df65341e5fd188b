package api

import (
	"bufio"
	"bytes"
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"errors"
	"io"
	"math/big"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"orbitwatch/shard"
)

// withWrite is the API of v plus a write endpoint, as the alert triage
// will add one: POST /v1/test-write reads its body and answers with the
// caller the guard admitted.
func withWrite(v *applierView) http.Handler {
	mux := http.NewServeMux()
	mux.Handle("/", New(v, Options{}))
	mux.HandleFunc("POST /v1/test-write", func(w http.ResponseWriter, r *http.Request) {
		if _, err := io.ReadAll(r.Body); err != nil {
			var tooBig *http.MaxBytesError
			if errors.As(err, &tooBig) {
				writeError(w, http.StatusRequestEntityTooLarge, "too big")
				return
			}
			writeError(w, http.StatusBadRequest, err.Error())
			return
		}
		c, ok := CallerOf(r)
		if !ok {
			writeError(w, http.StatusInternalServerError, "no caller")
			return
		}
		writeJSON(w, http.StatusOK, map[string]string{"name": c.Name, "role": c.Role.String()})
	})
	return mux
}

// serve listens as cfg says and serves h until the test ends.
func serve(t *testing.T, cfg ServerConfig, h http.Handler) *Server {
	t.Helper()
	s, err := Listen(cfg)
	if err != nil {
		t.Fatal(err)
	}
	go s.Serve(h)
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		s.Shutdown(ctx)
	})
	return s
}

type call struct {
	method, path, token, host string
	header                    map[string]string
	body                      []byte
}

// do sends c to base with client and returns the status and body.
func do(t *testing.T, client *http.Client, base string, c call) (int, string) {
	t.Helper()
	if c.method == "" {
		c.method = http.MethodGet
	}
	req, err := http.NewRequest(c.method, base+c.path, bytes.NewReader(c.body))
	if err != nil {
		t.Fatal(err)
	}
	if c.body == nil {
		req.Body, req.ContentLength = http.NoBody, 0
	}
	if c.token != "" {
		req.Header.Set("Authorization", "Bearer "+c.token)
	}
	if c.host != "" {
		req.Host = c.host
	}
	for k, v := range c.header {
		req.Header.Set(k, v)
	}
	resp, err := client.Do(req)
	if err != nil {
		t.Fatalf("%s %s: %v", c.method, c.path, err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	if resp.StatusCode == http.StatusUnauthorized && resp.Header.Get("WWW-Authenticate") == "" {
		t.Errorf("%s %s: 401 without WWW-Authenticate", c.method, c.path)
	}
	return resp.StatusCode, string(b)
}

func TestListenRefusesOpenBeyondLoopback(t *testing.T) {
	for _, addr := range []string{"0.0.0.0:0", ":0"} {
		s, err := Listen(ServerConfig{Addr: addr})
		if !errors.Is(err, ErrNoCredential) {
			if s != nil {
				s.Shutdown(context.Background())
			}
			t.Errorf("open listen on %s: %v, want ErrNoCredential", addr, err)
		}
	}
	// The refusal frees the port: nothing is left listening.
	s, err := Listen(ServerConfig{Addr: "127.0.0.1:0"})
	if err != nil {
		t.Fatal(err)
	}
	if !s.Policy().Open || s.Beyond || !strings.HasPrefix(s.URL(), "http://127.0.0.1:") {
		t.Errorf("loopback server: open %v beyond %v url %s", s.Policy().Open, s.Beyond, s.URL())
	}
	s.Shutdown(context.Background())

	tokens := tokensFile(t)
	s, err = Listen(ServerConfig{Addr: "0.0.0.0:0", TokensFile: tokens})
	if err != nil {
		t.Fatalf("tokens beyond loopback: %v", err)
	}
	if s.Policy().Open || !s.Beyond || !s.ClearTokensBeyondLoopback() {
		t.Errorf("tokens on 0.0.0.0: open %v beyond %v clear %v", s.Policy().Open, s.Beyond, s.ClearTokensBeyondLoopback())
	}
	s.Shutdown(context.Background())
	// Tokens on loopback are demanded too: configured means required.
	s, err = Listen(ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens})
	if err != nil || s.Policy().Open || s.ClearTokensBeyondLoopback() {
		t.Errorf("tokens on loopback: %v open %v", err, s != nil && s.Policy().Open)
	}
	s.Shutdown(context.Background())

	p := newPKI(t)
	for _, c := range []struct {
		cfg  ServerConfig
		want string
	}{
		{ServerConfig{Addr: "127.0.0.1:0", ClientCAFile: p.caFile}, "need the server to speak TLS"},
		{ServerConfig{Addr: "127.0.0.1:0", CertFile: p.serverCert}, "go together"},
		{ServerConfig{Addr: "127.0.0.1:0", TokensFile: filepath.Join(t.TempDir(), "none")}, "tokens file"},
		{ServerConfig{Addr: "0.0.0.0:0", CertFile: p.serverCert, KeyFile: p.serverKey}, ErrNoCredential.Error()}, // TLS alone is no credential
	} {
		s, err := Listen(c.cfg)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			if s != nil {
				s.Shutdown(context.Background())
			}
			t.Errorf("%+v: %v, want %q", c.cfg, err, c.want)
		}
	}
	s, err = Listen(ServerConfig{Addr: "0.0.0.0:0", CertFile: p.serverCert, KeyFile: p.serverKey, ClientCAFile: p.caFile})
	if err != nil {
		t.Fatalf("client certificates beyond loopback: %v", err)
	}
	if s.Policy().Open || !s.Policy().Certs || !strings.HasPrefix(s.URL(), "https://") {
		t.Errorf("TLS server: %+v %s", s.Policy(), s.URL())
	}
	s.Shutdown(context.Background())
}

// TestGuardTokens talks real HTTP to a server with a tokens file: reads
// need a token, writes an admin token, the probes and the page's files
// need none.
func TestGuardTokens(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokensFile(t)}, withWrite(v))
	c, base := http.DefaultClient, s.URL()
	for _, tc := range []struct {
		c    call
		code int
		body string
	}{
		{call{path: "/v1/status"}, 401, "needs a bearer token"},
		{call{path: nodePath(idSlash)}, 401, "needs a bearer token"},
		{call{path: "/metrics"}, 401, ""},
		{call{path: "/v1/status", token: "not-a-token-at-all-but-long-enough"}, 401, "not one this server admits"},
		{call{path: "/v1/status", header: map[string]string{"Authorization": "Basic " + readToken}}, 401, "must be Bearer"},
		{call{path: "/v1/status", header: map[string]string{"Authorization": "Bearer"}}, 401, "must be Bearer"},
		{call{path: "/v1/status", token: readToken}, 200, `"shards"`},
		{call{path: "/v1/status", header: map[string]string{"Authorization": "bearer " + readToken}}, 200, `"shards"`},
		{call{path: nodePath(idSlash), token: readToken}, 200, `"orbits"`},
		{call{path: nodePath(idSlash), token: adminToken}, 200, `"orbits"`},
		{call{path: "/healthz"}, 200, "alive"},
		{call{path: "/readyz"}, 200, "ready"},
		{call{path: "/"}, 200, "<html"},
		{call{path: "/ui/app.js"}, 200, "sessionStorage"},
		{call{method: "POST", path: "/v1/test-write", token: readToken, body: []byte("{}")}, 403, "needs an admin credential; dashboard has the read role"},
		{call{method: "POST", path: "/v1/test-write", body: []byte("{}")}, 401, ""},
		{call{method: "POST", path: "/healthz", body: []byte("{}")}, 401, ""}, // a write is never public
		{call{method: "POST", path: "/v1/test-write", token: adminToken, body: []byte("{}")}, 200, `{"name":"oncall","role":"admin"}`},
		{call{method: "DELETE", path: "/v1/alerts", token: adminToken}, 405, "use GET"},
	} {
		code, body := do(t, c, base, tc.c)
		if code != tc.code || !strings.Contains(body, tc.body) {
			t.Errorf("%s %s (token %.6q): %d %.200s, want %d with %q", tc.c.method, tc.c.path, tc.c.token, code, body, tc.code, tc.body)
		}
	}
}

// TestGuardHostsAndSizes: the Host header must name this server (DNS
// rebinding), bodies and headers are capped, cross-origin writes from a
// browser are refused, and on an open loopback server the anonymous caller
// may write from the same origin.
func TestGuardHostsAndSizes(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", Hosts: []string{"orbitwatch.payments.internal"}, MaxBody: 4096}, withWrite(v))
	if !s.Policy().Open {
		t.Fatal("loopback without credentials is not open")
	}
	c, base := http.DefaultClient, s.URL()
	port := base[strings.LastIndex(base, ":")+1:]
	for _, tc := range []struct {
		c    call
		code int
		body string
	}{
		{call{path: "/v1/status", host: "evil.example:" + port}, 421, `evil.example:` + port + `\" is not a name of this server`},
		{call{path: "/healthz", host: "evil.example"}, 421, ""},
		{call{path: "/", host: "rebind.attacker.invalid"}, 421, ""},
		{call{path: "/v1/status", host: "orbitwatch.payments.internal." + "x:" + port}, 421, ""},
		{call{path: "/v1/status", host: strings.Repeat("h", 5000)}, 421, "(5000 bytes)"},
		{call{path: "/v1/status", host: "localhost:" + port}, 200, ""},
		{call{path: "/v1/status", host: "ui.localhost:" + port}, 200, ""},
		{call{path: "/v1/status", host: "127.0.0.1:" + port}, 200, ""},
		{call{path: "/v1/status", host: "[::1]:" + port}, 200, ""},
		{call{path: "/v1/status", host: "10.1.2.3"}, 200, ""},
		{call{path: "/v1/status", host: "orbitwatch.payments.internal:" + port}, 200, ""},
		{call{path: "/v1/status", host: "OrbitWatch.Payments.Internal.:" + port}, 200, ""},
		// Sizes: a declared length above the cap, and a chunked body that
		// runs past it while the handler reads.
		{call{method: "POST", path: "/v1/test-write", body: bytes.Repeat([]byte("x"), 4097)}, 413, "4097 bytes; at most 4096"},
		{call{method: "POST", path: "/v1/test-write", body: bytes.Repeat([]byte("x"), 4096)}, 200, `"anonymous"`},
		{call{method: "POST", path: "/v1/test-write", body: []byte("{}"), header: map[string]string{"Sec-Fetch-Site": "cross-site"}}, 403, "cross-origin"},
		{call{method: "POST", path: "/v1/test-write", body: []byte("{}"), header: map[string]string{"Origin": "http://evil.example"}}, 403, "cross-origin"},
		{call{method: "POST", path: "/v1/test-write", body: []byte("{}"), header: map[string]string{"Sec-Fetch-Site": "same-origin"}}, 200, `"role":"admin"`},
	} {
		code, body := do(t, c, base, tc.c)
		if code != tc.code || !strings.Contains(body, tc.body) || len(body) > 600 {
			t.Errorf("%s %s Host %.40q: %d %.200s (%d bytes), want %d with %q", tc.c.method, tc.c.path, tc.c.host, code, body, len(body), tc.code, tc.body)
		}
	}
	// A chunked body (no declared length) is cut at the cap as it is read.
	req, _ := http.NewRequest(http.MethodPost, base+"/v1/test-write", io.MultiReader(bytes.NewReader(make([]byte, 3000)), bytes.NewReader(make([]byte, 3000))))
	req.ContentLength = -1
	resp, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != 413 {
		t.Errorf("chunked 6000-byte body: %d, want 413", resp.StatusCode)
	}
	// Headers above the cap: 431 from the server itself.
	code, _ := do(t, c, base, call{path: "/v1/status", header: map[string]string{"X-Pad": strings.Repeat("p", 70<<10)}})
	if code != http.StatusRequestHeaderFieldsTooLarge {
		t.Errorf("70 KiB of headers: %d, want 431", code)
	}
	// The page carries the headers that keep it in its own origin.
	resp, err = c.Get(base + "/")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if csp := resp.Header.Get("Content-Security-Policy"); !strings.Contains(csp, "default-src 'self'") || !strings.Contains(csp, "frame-ancestors 'none'") {
		t.Errorf("page CSP %q", csp)
	}
	if resp.Header.Get("X-Content-Type-Options") != "nosniff" {
		t.Error("no nosniff")
	}
}

// TestServerSlowHeaders holds a connection open sending half a request
// line: the server cuts it off after the read-header limit.
func TestServerSlowHeaders(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	lim := DefaultLimits
	lim.ReadHeader = 300 * time.Millisecond
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", Limits: lim}, New(v, Options{}))
	conn, err := net.Dial("tcp", strings.TrimPrefix(s.URL(), "http://"))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	if _, err := conn.Write([]byte("GET /v1/status HTTP/1.1\r\nHost: 127.0.0.1\r\n")); err != nil {
		t.Fatal(err)
	}
	conn.SetReadDeadline(time.Now().Add(10 * time.Second))
	start := time.Now()
	_, err = bufio.NewReader(conn).ReadByte()
	if err == nil {
		// The server may answer 408 before closing; then the next read ends.
		_, err = io.ReadAll(conn)
	}
	var ne net.Error
	if errors.As(err, &ne) && ne.Timeout() {
		t.Fatalf("the server kept a half-sent request open for 10 s")
	}
	if d := time.Since(start); d > 5*time.Second {
		t.Errorf("cut off after %v", d)
	}
	if DefaultLimits.ReadHeader == 0 || DefaultLimits.Read == 0 || DefaultLimits.Write == 0 || DefaultLimits.Idle == 0 || DefaultLimits.HeaderBytes == 0 {
		t.Errorf("a default limit is off: %+v", DefaultLimits)
	}
}

// TestGuardClientCertificates serves HTTPS to clients with certificates
// from the deployment CA: one the tokens file names admin, one it does not
// name (read), one from another CA (refused in the handshake), none (the
// probes only). Peers reach each other with PeerClient.
func TestGuardClientCertificates(t *testing.T) {
	p := newPKI(t)
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", CertFile: p.serverCert, KeyFile: p.serverKey, ClientCAFile: p.caFile, TokensFile: tokensFile(t)}, withWrite(v))
	base := s.URL()
	client := func(cert *tls.Certificate) *http.Client {
		cfg := &tls.Config{RootCAs: p.pool}
		if cert != nil {
			cfg.Certificates = []tls.Certificate{*cert}
		}
		return &http.Client{Transport: &http.Transport{TLSClientConfig: cfg}, Timeout: 10 * time.Second}
	}
	admin, viewer, stranger := p.client(t, "ops-desk.payments.internal", p.ca, p.caKey), p.client(t, "viewer", p.ca, p.caKey), p.stranger(t)
	for _, tc := range []struct {
		who  string
		c    *http.Client
		call call
		code int
		body string
	}{
		{"no certificate", client(nil), call{path: "/v1/status"}, 401, "or a client certificate"},
		{"no certificate", client(nil), call{path: "/healthz"}, 200, "alive"},
		{"no certificate, token", client(nil), call{path: "/v1/status", token: readToken}, 200, "shards"},
		{"viewer", client(&viewer), call{path: "/v1/status"}, 200, "shards"},
		{"viewer", client(&viewer), call{method: "POST", path: "/v1/test-write", body: []byte("{}")}, 403, "cert:viewer has the read role"},
		{"ops-desk", client(&admin), call{method: "POST", path: "/v1/test-write", body: []byte("{}")}, 200, `{"name":"ops-desk","role":"admin"}`},
	} {
		code, body := do(t, tc.c, base, tc.call)
		if code != tc.code || !strings.Contains(body, tc.body) {
			t.Errorf("%s: %s %s: %d %.200s, want %d with %q", tc.who, tc.call.method, tc.call.path, code, body, tc.code, tc.body)
		}
	}
	// Presented whatever the server's list of acceptable CAs says, a
	// certificate of another CA fails the handshake.
	force := &http.Client{Transport: &http.Transport{TLSClientConfig: &tls.Config{RootCAs: p.pool,
		GetClientCertificate: func(*tls.CertificateRequestInfo) (*tls.Certificate, error) { return &stranger, nil }}}}
	if resp, err := force.Get(base + "/healthz"); err == nil {
		resp.Body.Close()
		t.Errorf("a certificate of another CA got %d", resp.StatusCode)
	}
	// Offered the usual way it is not sent at all, and the caller has none.
	if code, _ := do(t, client(&stranger), base, call{path: "/v1/status"}); code != http.StatusUnauthorized {
		t.Errorf("another CA's certificate, not sent: %d, want 401", code)
	}

	// A second worker's status reaches this one as a peer, with the
	// server certificate (server and client use) as its client certificate.
	v2, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	v2.i, v2.n = 1, 2
	v2.setStatus(shard.Status{Shard: 1, Shards: 2, Ready: true})
	s2 := serve(t, ServerConfig{Addr: "127.0.0.1:0", CertFile: p.serverCert, KeyFile: p.serverKey, ClientCAFile: p.caFile}, New(v2, Options{}))
	h := New(v, Options{Peers: []string{base, s2.URL()}, PeerClient: s.PeerClient(5 * time.Second)})
	_, _, body := get(t, h, "/v1/status")
	st, _ := statusBody(t, body)
	if len(st.Shards) != 2 || st.Shards[1].Error != "" || st.Shards[1].Shard != 1 || st.Shards[1].ShardCount != 2 {
		t.Errorf("status with a TLS peer: %s", body)
	}
	// A plain client cannot: the peer refuses it.
	h = New(v, Options{Peers: []string{base, s2.URL()}})
	_, _, body = get(t, h, "/v1/status")
	if st, _ := statusBody(t, body); len(st.Shards) != 2 || st.Shards[1].Error == "" {
		t.Errorf("status with a TLS peer and no certificate: %s", body)
	}
}

// TestPeerStatusWithTokens: a peer behind tokens answers a worker that
// shows it a token, and its entry says why when the worker has none; a
// peer that does not answer, or answers as another shard, says so too.
func TestPeerStatusWithTokens(t *testing.T) {
	views := make([]*applierView, 3)
	for i := range views {
		views[i], _ = buildView(t, tailedTriangle(), []uint64{5}, nil)
		views[i].i, views[i].n = i, 4
		views[i].setStatus(shard.Status{Shard: i, Shards: 4, AppliedSeq: uint64(10 + i), Ready: true})
	}
	tokens := tokensFile(t)
	s1 := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(views[1], Options{}))
	s2 := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(views[1], Options{})) // says it is shard 1
	dead, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	deadURL := "http://" + dead.Addr().String()
	dead.Close()
	peers := []string{"", s1.URL(), s2.URL(), deadURL}
	h := New(views[0], Options{Peers: peers, PeerToken: readToken, Timeout: 2 * time.Second})
	_, _, body := get(t, h, "/v1/status")
	st, _ := statusBody(t, body)
	if len(st.Shards) != 4 {
		t.Fatalf("status: %s", body)
	}
	if w := st.Shards[1]; w.Error != "" || w.Shard != 1 || w.AppliedSeq != 11 {
		t.Errorf("peer 1: %+v", w)
	}
	if w := st.Shards[2]; w.Shard != 2 || !strings.Contains(w.Error, "says it is shard 1, not 2") {
		t.Errorf("peer 2: %+v", w)
	}
	if w := st.Shards[3]; w.Shard != 3 || !strings.Contains(w.Error, "peer "+deadURL) {
		t.Errorf("peer 3: %+v", w)
	}
	if _, _, body := get(t, h, "/v1/status?local=true"); strings.Count(string(body), `"shard":`) != 2 {
		t.Errorf("local status: %s", body)
	}
	h = New(views[0], Options{Peers: peers, Timeout: 2 * time.Second})
	_, _, body = get(t, h, "/v1/status")
	if st, _ := statusBody(t, body); !strings.Contains(st.Shards[1].Error, "401") {
		t.Errorf("peer behind tokens, no token: %+v", st.Shards[1])
	}
}

// pki is a deployment CA with a server certificate (for 127.0.0.1, usable
// as a client certificate too), as PEM files, and its pool.
type pki struct {
	ca                            *x509.Certificate
	caKey                         *ecdsa.PrivateKey
	pool                          *x509.CertPool
	caFile, serverCert, serverKey string
	dir                           string
}

func newPKI(t *testing.T) *pki {
	t.Helper()
	p := &pki{dir: t.TempDir()}
	p.ca, p.caKey = selfSigned(t, "orbitwatch test CA")
	p.pool = x509.NewCertPool()
	p.pool.AddCert(p.ca)
	p.caFile = writePEM(t, p.dir, "ca.pem", "CERTIFICATE", p.ca.Raw)
	der, key := leaf(t, "orbitwatch-0", p.ca, p.caKey, []net.IP{net.IPv4(127, 0, 0, 1)})
	p.serverCert = writePEM(t, p.dir, "server.pem", "CERTIFICATE", der)
	kb, _ := x509.MarshalECPrivateKey(key)
	p.serverKey = writePEM(t, p.dir, "server-key.pem", "EC PRIVATE KEY", kb)
	return p
}

// client returns a client certificate with common name cn signed by ca.
func (p *pki) client(t *testing.T, cn string, ca *x509.Certificate, caKey *ecdsa.PrivateKey) tls.Certificate {
	t.Helper()
	der, key := leaf(t, cn, ca, caKey, nil)
	return tls.Certificate{Certificate: [][]byte{der}, PrivateKey: key}
}

// stranger returns a certificate named as the admin is, from another CA.
func (p *pki) stranger(t *testing.T) tls.Certificate {
	t.Helper()
	ca, key := selfSigned(t, "somebody else's CA")
	return p.client(t, "ops-desk.payments.internal", ca, key)
}

func selfSigned(t *testing.T, cn string) (*x509.Certificate, *ecdsa.PrivateKey) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: cn}, NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
		IsCA: true, BasicConstraintsValid: true, KeyUsage: x509.KeyUsageCertSign | x509.KeyUsageDigitalSignature}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	c, err := x509.ParseCertificate(der)
	if err != nil {
		t.Fatal(err)
	}
	return c, key
}

func leaf(t *testing.T, cn string, ca *x509.Certificate, caKey *ecdsa.PrivateKey, ips []net.IP) ([]byte, *ecdsa.PrivateKey) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	serial, _ := rand.Int(rand.Reader, big.NewInt(1<<62))
	tmpl := &x509.Certificate{SerialNumber: serial, Subject: pkix.Name{CommonName: cn}, NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
		KeyUsage: x509.KeyUsageDigitalSignature, ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth, x509.ExtKeyUsageClientAuth}, IPAddresses: ips}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, ca, &key.PublicKey, caKey)
	if err != nil {
		t.Fatal(err)
	}
	return der, key
}

func writePEM(t *testing.T, dir, name, typ string, der []byte) string {
	t.Helper()
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, pem.EncodeToMemory(&pem.Block{Type: typ, Bytes: der}), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}
