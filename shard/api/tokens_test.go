package api

import (
	"crypto/sha256"
	"encoding/hex"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const (
	readToken  = "rd-0123456789abcdefghijklmnopqrstuv"
	adminToken = "ad-ZYXWVUTSRQPONMLKJIHGFEDCBA987654"
)

func digest(token string) string {
	d := sha256.Sum256([]byte(token))
	return hex.EncodeToString(d[:])
}

// tokensFile writes the tokens file the guard tests use: the read token by
// its digest, the admin token in clear, an admin certificate name.
func tokensFile(t *testing.T) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "tokens")
	body := "# who may read the API\n\n" +
		"read   dashboard  sha256:" + digest(readToken) + "\n" +
		"admin\toncall\ttoken:" + adminToken + "   \n" +
		"admin  ops-desk   cert:ops-desk.payments.internal\n"
	if err := os.WriteFile(path, []byte(body), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestTokensFile(t *testing.T) {
	tok, err := LoadTokens(tokensFile(t))
	if err != nil {
		t.Fatal(err)
	}
	if tok.Bearers() != 2 || tok.Clear() != 1 {
		t.Errorf("%d bearer tokens, %d in clear; want 2 and 1", tok.Bearers(), tok.Clear())
	}
	for _, c := range []struct {
		token string
		want  Caller
		ok    bool
	}{
		{readToken, Caller{"dashboard", RoleRead}, true},
		{adminToken, Caller{"oncall", RoleAdmin}, true},
		{digest(readToken), Caller{}, false}, // the digest is not the token
		{readToken + "x", Caller{}, false},
		{"", Caller{}, false},
	} {
		got, ok := tok.Bearer([]byte(c.token))
		if got != c.want || ok != c.ok {
			t.Errorf("Bearer(%.12q…) = %+v %v, want %+v %v", c.token, got, ok, c.want, c.ok)
		}
	}
	if c, ok := tok.Cert("ops-desk.payments.internal"); !ok || c != (Caller{"ops-desk", RoleAdmin}) {
		t.Errorf("Cert: %+v %v", c, ok)
	}
	if _, ok := tok.Cert("viewer"); ok {
		t.Error("an unlisted certificate name is listed")
	}
	var none *Tokens
	if _, ok := none.Bearer([]byte(readToken)); ok || none.Bearers() != 0 {
		t.Error("nil Tokens admit a token")
	}
}

func TestTokensFileErrors(t *testing.T) {
	good := "read a sha256:" + digest(readToken)
	for _, c := range []struct{ body, want string }{
		{"", "no credential"},
		{"# only a comment\n", "no credential"},
		{good + "\nread b\n", "line 2: want three fields"},
		{"write a token:" + adminToken, "line 1: role \"write\""},
		{"read a/b token:" + adminToken, "name \"a/b\""},
		{"read a " + adminToken, "want sha256:HEX, token:TEXT or cert:NAME"},
		{"read a token:short", "token of a: 5 characters, want at least 32"},
		{"read a token:" + adminToken + "é", "printable ASCII"},
		{"read a sha256:abc", "64 hex digits"},
		{"read a sha256:" + strings.Repeat("g", 64), "64 hex digits"},
		{"read a password:" + adminToken, `"password"`},
		{good + "\nadmin b token:" + readToken, "line 2: the token of b is listed twice"},
		{"read a cert:x\nadmin b cert:x", "line 2: certificate name \"x\" listed twice"},
		{"read a cert:", "credential of a"},
	} {
		_, err := ParseTokens(strings.NewReader(c.body))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want an error with %q", c.body, err, c.want)
		}
	}
	if _, err := LoadTokens(filepath.Join(t.TempDir(), "missing")); err == nil {
		t.Error("a missing file loaded")
	}
}

func TestReadToken(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "peer")
	os.WriteFile(p, []byte("\n  "+readToken+"  \nsecond\n"), 0o600)
	if tok, err := ReadToken(p); err != nil || tok != readToken {
		t.Errorf("ReadToken: %q %v", tok, err)
	}
	os.WriteFile(p, []byte("\n \n"), 0o600)
	if _, err := ReadToken(p); err == nil {
		t.Error("an empty token file was read")
	}
}
