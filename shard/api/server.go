package api

import (
	"context"
	"crypto/tls"
	"crypto/x509"
	"errors"
	"fmt"
	"net"
	"net/http"
	"os"
	"time"
)

// Limits bound what one client can hold of the server. A client that
// sends its headers slowly is cut off after ReadHeader, a whole request
// after Read, an answer after Write (a history of many cuts is the
// slowest), an idle keep-alive connection after Idle; headers (the URL
// included) are capped at HeaderBytes (431 above).
type Limits struct {
	ReadHeader, Read, Write, Idle time.Duration
	HeaderBytes                   int
}

// DefaultLimits are the limits of a ServerConfig that sets none.
var DefaultLimits = Limits{ReadHeader: 10 * time.Second, Read: 30 * time.Second, Write: 2 * time.Minute, Idle: 2 * time.Minute, HeaderBytes: 64 << 10}

// ServerConfig says where the API listens and whom it admits.
type ServerConfig struct {
	// Addr is host:port to listen on.
	Addr string
	// TokensFile lists bearer tokens and certificate names with their
	// roles (see Tokens).
	TokensFile string
	// CertFile and KeyFile, both or neither, make the server speak HTTPS
	// with that certificate chain and key (PEM).
	CertFile, KeyFile string
	// ClientCAFile (PEM) admits clients whose TLS certificate it signed:
	// with the role the tokens file gives the certificate's common name,
	// else RoleRead. It needs CertFile.
	ClientCAFile string
	// Hosts are host names the Host header may carry besides IP addresses
	// and localhost (see Policy.Hosts).
	Hosts []string
	// MaxBody caps a request body; 0 means DefaultMaxBody.
	MaxBody int64
	// Limits are the server's timeouts and header cap; the zero value
	// means DefaultLimits.
	Limits Limits
}

// ErrNoCredential is the refusal to listen beyond loopback with no
// credential configured.
var ErrNoCredential = errors.New("listening beyond loopback needs a credential: bearer tokens or TLS client certificates")

// Server is the API's listener with its guard, limits and TLS settings.
type Server struct {
	srv    *http.Server
	ln     net.Listener
	policy Policy
	tls    *tls.Config
	caPEM  []byte // the client CA, for PeerClient
	url    string
	limits Limits
	// Beyond is true when the listener reaches beyond loopback.
	Beyond bool
}

// Listen loads cfg's credentials and listens on cfg.Addr. Without a
// credential (a tokens file with a bearer token, or a client CA) it admits
// everyone on a loopback address and refuses (ErrNoCredential) any other:
// 0.0.0.0, ::, a host's own address or a name that resolves to one.
func Listen(cfg ServerConfig) (*Server, error) {
	s := &Server{policy: Policy{Hosts: cfg.Hosts, MaxBody: cfg.MaxBody}, limits: cfg.Limits}
	if s.limits == (Limits{}) {
		s.limits = DefaultLimits
	}
	if cfg.TokensFile != "" {
		t, err := LoadTokens(cfg.TokensFile)
		if err != nil {
			return nil, fmt.Errorf("tokens file: %w", err)
		}
		s.policy.Tokens = t
	}
	if (cfg.CertFile == "") != (cfg.KeyFile == "") {
		return nil, errors.New("a TLS certificate and its key go together")
	}
	if cfg.ClientCAFile != "" && cfg.CertFile == "" {
		return nil, errors.New("client certificates need the server to speak TLS: give its certificate and key")
	}
	if cfg.CertFile != "" {
		cert, err := tls.LoadX509KeyPair(cfg.CertFile, cfg.KeyFile)
		if err != nil {
			return nil, fmt.Errorf("TLS certificate: %w", err)
		}
		s.tls = &tls.Config{MinVersion: tls.VersionTLS12, Certificates: []tls.Certificate{cert}}
		if cfg.ClientCAFile != "" {
			pool, pem, err := loadPool(cfg.ClientCAFile)
			if err != nil {
				return nil, err
			}
			s.caPEM = pem
			// Verified when given: the probes of a load balancer come
			// without one and the guard lets only them through.
			s.tls.ClientCAs, s.tls.ClientAuth = pool, tls.VerifyClientCertIfGiven
			s.policy.Certs = true
		}
	}
	credential := s.policy.Tokens.Bearers() > 0 || s.policy.Certs
	ln, err := net.Listen("tcp", cfg.Addr)
	if err != nil {
		return nil, err
	}
	addr := ln.Addr().(*net.TCPAddr)
	s.Beyond = !addr.IP.IsLoopback()
	if s.Beyond && !credential {
		ln.Close()
		return nil, fmt.Errorf("%s: %w", addr, ErrNoCredential)
	}
	s.policy.Open = !credential
	if host, _, err := net.SplitHostPort(cfg.Addr); err == nil && host != "" && net.ParseIP(host) == nil {
		s.policy.Hosts = append(s.policy.Hosts, host)
	}
	s.srv = &http.Server{
		ReadHeaderTimeout: s.limits.ReadHeader,
		ReadTimeout:       s.limits.Read,
		WriteTimeout:      s.limits.Write,
		IdleTimeout:       s.limits.Idle,
		MaxHeaderBytes:    s.limits.HeaderBytes,
	}
	s.ln, s.url = ln, "http://"+addr.String()
	if s.tls != nil {
		s.ln, s.url = tls.NewListener(ln, s.tls), "https://"+addr.String()
	}
	return s, nil
}

func loadPool(path string) (*x509.CertPool, []byte, error) {
	pem, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, fmt.Errorf("client CA: %w", err)
	}
	pool := x509.NewCertPool()
	if !pool.AppendCertsFromPEM(pem) {
		return nil, nil, fmt.Errorf("client CA %s: no PEM certificate in it", path)
	}
	return pool, pem, nil
}

// URL is the base URL the server answers on, e.g. "http://127.0.0.1:7474".
func (s *Server) URL() string { return s.url }

// Policy is what the guard enforces (after Listen: Open set on a loopback
// address without credentials).
func (s *Server) Policy() Policy { return s.policy }

// ClearTokensBeyondLoopback reports a setup that is allowed but weak:
// bearer tokens accepted over plain HTTP on an address beyond loopback,
// where they cross the network in clear unless a TLS proxy stands in
// front.
func (s *Server) ClearTokensBeyondLoopback() bool {
	return s.Beyond && s.tls == nil && s.policy.Tokens.Bearers() > 0
}

// Serve answers requests with h behind the guard until Shutdown; it
// returns http.ErrServerClosed then. Call it once.
func (s *Server) Serve(h http.Handler) error {
	s.srv.Handler = Guard(h, s.policy)
	return s.srv.Serve(s.ln)
}

// Shutdown stops the server, waiting for answers in progress until ctx
// ends. It may come before Serve, which then returns at once.
func (s *Server) Shutdown(ctx context.Context) error {
	err := s.srv.Shutdown(ctx)
	s.ln.Close() // when Serve never ran, nothing else closes it
	return err
}

// PeerClient returns the client for the status requests to peers: with
// this server's own certificate as its client certificate and the client
// CA trusted beside the system's roots (one deployment CA usually signs
// every worker's certificate for both ends), and timeout per request.
func (s *Server) PeerClient(timeout time.Duration) *http.Client {
	if s.tls == nil {
		return &http.Client{Timeout: timeout}
	}
	roots, err := x509.SystemCertPool()
	if err != nil {
		roots = x509.NewCertPool()
	}
	roots.AppendCertsFromPEM(s.caPEM)
	tr := http.DefaultTransport.(*http.Transport).Clone()
	tr.TLSClientConfig = &tls.Config{MinVersion: tls.VersionTLS12, RootCAs: roots, Certificates: s.tls.Certificates}
	return &http.Client{Timeout: timeout, Transport: tr}
}
