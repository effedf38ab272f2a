package policies

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/internal/strictyaml"
)

// financePEM is testdata/keys/finance_partner.pem; its fingerprint was
// computed outside this code with
// `openssl pkey -pubin -outform DER | sha256sum` (OpenSSL 3).
const financeFP = "sha256:e2783178f9dd1b77a67ca60d0571731f8a87ac3480189607195e5590314608af"

func signingPolicy(roles, signoffs, signing string) string {
	return "version: 1\nrisk: {max_loss_probability: 0.2, downside_level: 0.05, cvar_level: 0.05}\n" +
		"support: {high_multiple: 1.2}\nroles:\n" + roles + signoffs + signing
}

func TestKeyPinning(t *testing.T) {
	pemText, err := os.ReadFile("testdata/keys/finance_partner.pem")
	if err != nil {
		t.Fatal(err)
	}
	inline := "      - |\n        " + strings.ReplaceAll(strings.TrimSpace(string(pemText)), "\n", "\n        ") + "\n"
	always := "signoffs:\n  - {name: always, roles: [a], when: {always: true}}\n"
	cases := []struct {
		name, roles, signoffs, signing string
		path, msg                      string // "" path: accepted
	}{
		{"pinned file", "  a:\n    keys: ['keys/finance_partner.pem " + financeFP + "']\n", always, "", "", ""},
		{"inline PEM", "  a:\n    keys:\n" + inline, always, "", "", ""},
		{"path alone", "  a:\n    keys: [keys/finance_partner.pem]\n", always, "", "roles.a.keys[0]", "a path alone is not trust"},
		{"fingerprint alone", "  a:\n    keys: ['" + financeFP + "']\n", always, "", "roles.a.keys[0]", "without the key file"},
		{"short fingerprint", "  a:\n    keys: ['k.pem sha256:abc']\n", always, "", "roles.a.keys[0]", "64 lowercase hex"},
		{"broken inline PEM", "  a:\n    keys: ['-----BEGIN PUBLIC KEY-----\n\n      AAAA\n\n      -----END PUBLIC KEY-----']\n", always, "", "roles.a.keys[0]", "not valid PKIX"},
		{"one key two roles", "  a:\n    keys:\n" + inline + "  b:\n    keys: ['keys/finance_partner.pem " + financeFP + "']\n", always, "", "roles.b.keys[0]", "separation of duties"},
		{"one key two roles, allowed", "  a:\n    keys:\n" + inline + "  b:\n    keys: ['keys/finance_partner.pem " + financeFP + "']\n", always,
			"signing: {allow_shared_signers: true}\n", "", ""},
		{"no sign-off rule", "  a: {}\n", "", "", "signoffs", "allow_unsigned"},
		{"empty sign-off list", "  a: {}\n", "signoffs: []\n", "", "signoffs", "allow_unsigned"},
		{"no sign-off rule, allowed", "  a: {}\n", "", "signing: {allow_unsigned: true}\n", "", ""},
		{"negative age", "  a: {}\n", always, "signing: {max_age_days: -1}\n", "signing.max_age_days", "negative"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := signingPolicy(c.roles, c.signoffs, c.signing)
			p, err := Parse([]byte(src), "p.yaml")
			if c.path == "" {
				if err != nil {
					t.Fatalf("refused: %v\n%s", err, src)
				}
				for _, e := range p.KeyEntries("a") {
					if e.Fingerprint != financeFP {
						t.Errorf("fingerprint %s, want %s (openssl)", e.Fingerprint, financeFP)
					}
				}
				return
			}
			var e *strictyaml.Error
			if !errors.As(err, &e) || e.Path != c.path || !strings.Contains(e.Msg, c.msg) || (e.Line == 0 && c.name != "no sign-off rule") {
				t.Fatalf("got %v, want %s: ...%s...", err, c.path, c.msg)
			}
			if strings.Contains(err.Error(), "MCowBQYDK2VwAyEA") {
				t.Errorf("message repeats key text: %v", err)
			}
		})
	}
}

// A key file replaced after the policy was written is refused when read,
// naming both fingerprints: the policy's hash now covers the key.
func TestKeyFileReplaced(t *testing.T) {
	dir := t.TempDir()
	src := signingPolicy("  a:\n    keys: ['k.pem "+financeFP+"']\n", "signoffs:\n  - {name: always, roles: [a], when: {always: true}}\n", "")
	if err := os.WriteFile(filepath.Join(dir, "p.yaml"), []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	orig, _ := os.ReadFile("testdata/keys/finance_partner.pem")
	if err := os.WriteFile(filepath.Join(dir, "k.pem"), orig, 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := Load(filepath.Join(dir, "p.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := p.KeyPEM("a"); err != nil {
		t.Fatalf("the pinned key is refused: %v", err)
	}
	// Another valid ed25519 key (RFC 8032 section 7.1, TEST 2 public key, in PKIX form).
	other := "-----BEGIN PUBLIC KEY-----\nMCowBQYDK2VwAyEAPUAXw+hDiVqStwqnTRt+vJyYLM8uxJaMwM1V8Sr0Zgw=\n-----END PUBLIC KEY-----\n"
	if err := os.WriteFile(filepath.Join(dir, "k.pem"), []byte(other), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = p.KeyPEM("a")
	if err == nil || !strings.Contains(err.Error(), "the key file was replaced") || !strings.Contains(err.Error(), financeFP) {
		t.Fatalf("replaced key file: %v", err)
	}
}
