package api

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"regexp"
	"strings"
)

// Role is what a caller may do.
type Role uint8

const (
	// RoleRead may use the safe methods (GET, HEAD, OPTIONS): every read.
	RoleRead Role = iota + 1
	// RoleAdmin may use every method: the reads and the endpoints that
	// change something (POST, PUT, PATCH, DELETE).
	RoleAdmin
)

func (r Role) String() string {
	switch r {
	case RoleRead:
		return "read"
	case RoleAdmin:
		return "admin"
	}
	return "none"
}

// Caller is who made a request, as the guard established it.
type Caller struct {
	// Name is the name the tokens file gives the token or certificate,
	// "cert:" and the subject's common name for a certificate the file
	// does not list, or "anonymous" where no credential is required.
	Name string
	Role Role
}

// Tokens are the credentials a tokens file lists: bearer tokens (kept as
// their SHA-256 digests only) and TLS client certificate names, each with
// a role and a name for logs.
//
// The file is UTF-8 text, one credential per line, three fields separated
// by spaces or tabs (role, name, credential); blank lines and lines
// starting with # are skipped:
//
//	# role  name       credential
//	read    dashboard  sha256:9b71d224bd62f3785d96d46ad3ea3d73319bfbc2890caadae2dff72519673ca7
//	admin   oncall     token:2xY0r1c7wQ9zK4mB8vN3pL6tR5sD0fH1jG2aE7uI9oU
//	admin   ops-desk   cert:ops-desk.payments.internal
//
// The role is read (every GET) or admin (every request, writes included).
// The name says whose credential it is (1–64 of A–Z a–z 0–9 . _ @ -); it
// is what logs and audit records show, never the token. The credential is
// one of:
//
//   - sha256:HEX, the SHA-256 digest of a bearer token in 64 hex digits
//     (the file then holds no secret: printf %s "$TOKEN" | sha256sum);
//   - token:TEXT, the bearer token itself, at least MinTokenLength
//     printable ASCII characters without spaces (openssl rand -base64 33);
//   - cert:NAME, a TLS client certificate whose subject common name is
//     NAME, verified against the server's client CA (a verified
//     certificate the file does not list may read).
//
// A credential listed twice is an error, whatever its roles.
type Tokens struct {
	byDigest map[[sha256.Size]byte]Caller
	byCert   map[string]Caller
	// clear counts the tokens written as themselves (token:), so that a
	// caller can warn about a file that holds secrets.
	clear int
}

// MinTokenLength is the shortest bearer token a tokens file may hold in
// clear (token:): 32 characters of a random base64 text carry 192 bits.
const MinTokenLength = 32

var tokenName = regexp.MustCompile(`^[A-Za-z0-9._@-]{1,64}$`)

// LoadTokens reads a tokens file (see Tokens).
func LoadTokens(path string) (*Tokens, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	t, err := ParseTokens(f)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return t, nil
}

// ParseTokens reads the tokens file format (see Tokens). A file with no
// credential at all is an error: it would admit nobody.
func ParseTokens(r io.Reader) (*Tokens, error) {
	t := &Tokens{byDigest: map[[sha256.Size]byte]Caller{}, byCert: map[string]Caller{}}
	sc := bufio.NewScanner(r)
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		if err := t.add(line); err != nil {
			return nil, fmt.Errorf("line %d: %w", n, err)
		}
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	if len(t.byDigest)+len(t.byCert) == 0 {
		return nil, fmt.Errorf("no credential in the file (want lines ROLE NAME CREDENTIAL)")
	}
	return t, nil
}

func (t *Tokens) add(line string) error {
	f := strings.Fields(line)
	if len(f) != 3 {
		return fmt.Errorf("want three fields, role name credential; found %d", len(f))
	}
	var c Caller
	switch f[0] {
	case "read":
		c.Role = RoleRead
	case "admin":
		c.Role = RoleAdmin
	default:
		return fmt.Errorf("role %q: want read or admin", f[0])
	}
	if !tokenName.MatchString(f[1]) {
		return fmt.Errorf("name %q: want 1–64 of A–Z a–z 0–9 . _ @ -", f[1])
	}
	c.Name = f[1]
	kind, val, ok := strings.Cut(f[2], ":")
	if !ok || val == "" {
		return fmt.Errorf("credential of %s: want sha256:HEX, token:TEXT or cert:NAME", c.Name)
	}
	switch kind {
	case "sha256":
		b, err := hex.DecodeString(val)
		if err != nil || len(b) != sha256.Size {
			return fmt.Errorf("credential of %s: sha256: wants %d hex digits", c.Name, 2*sha256.Size)
		}
		return t.addDigest([sha256.Size]byte(b), c)
	case "token":
		if len(val) < MinTokenLength {
			return fmt.Errorf("token of %s: %d characters, want at least %d", c.Name, len(val), MinTokenLength)
		}
		for _, r := range val {
			if r <= ' ' || r > '~' {
				return fmt.Errorf("token of %s: want printable ASCII characters without spaces", c.Name)
			}
		}
		t.clear++
		return t.addDigest(sha256.Sum256([]byte(val)), c)
	case "cert":
		if _, dup := t.byCert[val]; dup {
			return fmt.Errorf("certificate name %q listed twice", val)
		}
		t.byCert[val] = c
		return nil
	}
	return fmt.Errorf("credential of %s: %q: want sha256:HEX, token:TEXT or cert:NAME", c.Name, kind)
}

func (t *Tokens) addDigest(d [sha256.Size]byte, c Caller) error {
	if _, dup := t.byDigest[d]; dup {
		return fmt.Errorf("the token of %s is listed twice", c.Name)
	}
	t.byDigest[d] = c
	return nil
}

// Bearer returns the caller whose token this is. The token is compared
// by its SHA-256 digest, so how long a lookup takes says nothing about
// the tokens' text.
func (t *Tokens) Bearer(token []byte) (Caller, bool) {
	if t == nil {
		return Caller{}, false
	}
	c, ok := t.byDigest[sha256.Sum256(token)]
	return c, ok
}

// Cert returns the caller a client certificate with subject common name
// cn is listed as.
func (t *Tokens) Cert(cn string) (Caller, bool) {
	if t == nil {
		return Caller{}, false
	}
	c, ok := t.byCert[cn]
	return c, ok
}

// Bearers is the number of bearer tokens (0 for nil Tokens).
func (t *Tokens) Bearers() int {
	if t == nil {
		return 0
	}
	return len(t.byDigest)
}

// Clear is how many of the bearer tokens the file holds in clear (token:).
func (t *Tokens) Clear() int {
	if t == nil {
		return 0
	}
	return t.clear
}

// ReadToken reads one bearer token from a file: its first non-blank line,
// without surrounding spaces (for presenting to peers).
func ReadToken(path string) (string, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return "", err
	}
	for line := range bytes.Lines(b) {
		if s := strings.TrimSpace(string(line)); s != "" {
			return s, nil
		}
	}
	return "", fmt.Errorf("%s: no token in the file", path)
}
