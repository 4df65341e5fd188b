package api

import (
	"context"
	"fmt"
	"net"
	"net/http"
	"net/netip"
	"strings"
)

// DefaultMaxBody is the largest request body the guard admits unless told
// otherwise: 1 MiB, far above any JSON a write endpoint takes.
const DefaultMaxBody = 1 << 20

// Policy says whom the guard admits and what it lets through.
type Policy struct {
	// Tokens are the bearer tokens and certificate names admitted; nil
	// for none.
	Tokens *Tokens
	// Certs admits clients that presented a TLS certificate the server
	// verified (its client CA): as the tokens file lists the certificate's
	// common name, else with RoleRead.
	Certs bool
	// Open admits callers without a credential, as admins. It is the
	// default on loopback when neither Tokens nor Certs is set; Server
	// refuses it beyond loopback.
	Open bool
	// Hosts are the names, besides IP addresses, localhost and names
	// under .localhost, that a request's Host header may carry: a page
	// served from another name cannot then read the API by pointing that
	// name at this server (DNS rebinding). Compared without case and
	// without a trailing dot.
	Hosts []string
	// MaxBody caps a request's body; 0 means DefaultMaxBody.
	MaxBody int64
}

// Guard returns h behind p: the Host header is checked, bodies are
// capped (413 above MaxBody), the caller is established (a bearer token,
// a verified client certificate, or nobody where p.Open), reads need
// RoleRead and every other method RoleAdmin, and browsers' cross-origin
// writes are refused (http.CrossOriginProtection). The probes (/healthz,
// /readyz) and the page's own files (/, /ui/…) are served to anyone who
// passes the Host check, so that a load balancer can probe and a browser
// can load the page that then asks for a token. Handlers read the caller
// with CallerOf.
func Guard(h http.Handler, p Policy) http.Handler {
	g := &guard{next: h, p: p, hosts: map[string]bool{}, cop: http.NewCrossOriginProtection()}
	if g.p.MaxBody <= 0 {
		g.p.MaxBody = DefaultMaxBody
	}
	for _, n := range p.Hosts {
		g.hosts[canonicalHost(n)] = true
	}
	return g
}

type guard struct {
	next  http.Handler
	p     Policy
	hosts map[string]bool
	cop   *http.CrossOriginProtection
}

type callerKey struct{}

// CallerOf returns the caller the guard admitted r as; ok is false for a
// request that did not pass a guard.
func CallerOf(r *http.Request) (c Caller, ok bool) {
	c, ok = r.Context().Value(callerKey{}).(Caller)
	return c, ok
}

func (g *guard) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	h := w.Header()
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("Content-Security-Policy", "default-src 'self'; frame-ancestors 'none'; form-action 'self'")
	h.Set("Referrer-Policy", "no-referrer")
	if !g.hostAllowed(r.Host) {
		writeError(w, http.StatusMisdirectedRequest, fmt.Sprintf("host %s is not a name of this server (IP addresses, localhost and the configured host names are)", quoted(r.Host)))
		return
	}
	if r.ContentLength > g.p.MaxBody {
		writeError(w, http.StatusRequestEntityTooLarge, fmt.Sprintf("request body of %d bytes; at most %d are accepted", r.ContentLength, g.p.MaxBody))
		return
	}
	r.Body = http.MaxBytesReader(w, r.Body, g.p.MaxBody)
	safe := r.Method == http.MethodGet || r.Method == http.MethodHead || r.Method == http.MethodOptions
	if safe && public(r.URL.Path) {
		g.next.ServeHTTP(w, r)
		return
	}
	c, status, msg := g.authenticate(r)
	if status != 0 {
		if status == http.StatusUnauthorized {
			h.Set("WWW-Authenticate", `Bearer realm="orbitwatch"`)
		}
		writeError(w, status, msg)
		return
	}
	if !safe && c.Role < RoleAdmin {
		writeError(w, http.StatusForbidden, fmt.Sprintf("%s %s changes something and needs an admin credential; %s has the %s role", r.Method, shorten(r.URL.Path), c.Name, c.Role))
		return
	}
	if err := g.cop.Check(r); err != nil {
		writeError(w, http.StatusForbidden, "cross-origin request refused: "+err.Error())
		return
	}
	g.next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), callerKey{}, c)))
}

// public reports whether path is served without a credential: the
// probes and the page's own files, which hold no data.
func public(path string) bool {
	return path == "/" || path == "/healthz" || path == "/readyz" || strings.HasPrefix(path, "/ui/")
}

// authenticate returns the caller of r, or the status (401, 403) and
// message refusing it.
func (g *guard) authenticate(r *http.Request) (Caller, int, string) {
	if auth := r.Header.Get("Authorization"); auth != "" {
		scheme, token, _ := strings.Cut(auth, " ")
		token = strings.TrimSpace(token)
		if !strings.EqualFold(scheme, "Bearer") || token == "" {
			return Caller{}, http.StatusUnauthorized, "the Authorization header must be Bearer and a token"
		}
		if c, ok := g.p.Tokens.Bearer([]byte(token)); ok {
			return c, 0, ""
		}
		return Caller{}, http.StatusUnauthorized, "the bearer token is not one this server admits"
	}
	if g.p.Certs && r.TLS != nil && len(r.TLS.VerifiedChains) > 0 {
		cn := r.TLS.VerifiedChains[0][0].Subject.CommonName
		if c, ok := g.p.Tokens.Cert(cn); ok {
			return c, 0, ""
		}
		return Caller{Name: "cert:" + cn, Role: RoleRead}, 0, ""
	}
	if g.p.Open {
		return Caller{Name: "anonymous", Role: RoleAdmin}, 0, ""
	}
	switch {
	case g.p.Tokens.Bearers() > 0 && g.p.Certs:
		return Caller{}, http.StatusUnauthorized, "this API needs a bearer token (Authorization: Bearer …) or a client certificate"
	case g.p.Certs:
		return Caller{}, http.StatusUnauthorized, "this API needs a client certificate"
	}
	return Caller{}, http.StatusUnauthorized, "this API needs a bearer token (Authorization: Bearer …)"
}

// hostAllowed reports whether a request's Host header names this server:
// empty (a client too old to send one, never a browser), an IP address,
// localhost or a name under .localhost, or one of the configured names.
func (g *guard) hostAllowed(hostport string) bool {
	if hostport == "" {
		return true
	}
	host := hostport
	if h, _, err := net.SplitHostPort(hostport); err == nil {
		host = h
	}
	host = strings.TrimSuffix(strings.TrimPrefix(host, "["), "]")
	if _, err := netip.ParseAddr(host); err == nil {
		return true
	}
	host = canonicalHost(host)
	return host == "localhost" || strings.HasSuffix(host, ".localhost") || g.hosts[host]
}

func canonicalHost(h string) string { return strings.TrimSuffix(strings.ToLower(h), ".") }
