package record

import (
	"bytes"
	"crypto/ed25519"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"

	"sluice/gate"
	"sluice/policies"
	"sluice/validation"
)

type decisionKey struct {
	priv ed25519.PrivateKey
	pem  string
}

func newDecisionKey(t *testing.T, seed uint64) decisionKey {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	var s [32]byte
	for i := range s {
		s[i] = byte(r.Uint32())
	}
	priv := ed25519.NewKeyFromSeed(s[:])
	pem, err := MarshalPublicKeyPEM(priv.Public().(ed25519.PublicKey))
	if err != nil {
		t.Fatal(err)
	}
	return decisionKey{priv, string(pem)}
}

func indent(s string) string { return strings.ReplaceAll(strings.TrimSpace(s), "\n", "\n        ") }

// testPolicy is a policy with two roles, each with one key; finance may
// waive lift checks.
func decisionPolicy(t *testing.T, finance, lead decisionKey, extra string) *policies.Policy {
	t.Helper()
	src := fmt.Sprintf(`version: 1
name: test
risk: {max_loss_probability: 0.2, downside_level: 0.05, cvar_level: 0.05}
support: {high_multiple: 1.2, low_multiple: 0.8}
min_move: {share_of_spend: 0.01}
evidence:
  on_fail: refuse
  exploration_band: 0.1
  waivers:
    finance: {families: [lift]}
roles:
  finance:
    keys:
      - |
        %s
  lead:
    keys:
      - |
        %s
signoffs:
  - {name: always, explain: every decision, roles: [lead, finance], when: {always: true}}
%s`, indent(finance.pem), indent(lead.pem), extra)
	p, err := policies.Parse([]byte(src), "policy.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func decisionRecord(t *testing.T, p *policies.Policy, verdict gate.Verdict) []byte {
	t.Helper()
	d := &Decision{Format: DecisionFormat, Tool: "sluice", Version: "test", Seed: 7, KPI: "revenue",
		Channels: []string{"search", "tv"}, Horizon: 13, PolicySHA256: SHA256Hex(p.Raw),
		Inputs:  map[string]Input{"data": {Path: "weekly.csv", SHA256: strings.Repeat("ab", 32)}},
		Caution: Caution}
	d.Verdict = verdict
	d.SignoffsRequired = []gate.Signoff{{Role: "lead", Rule: "always", Explanation: "every decision"},
		{Role: "finance", Rule: "always", Explanation: "every decision"}}
	d.Checks = []gate.CheckUse{{Check: validation.Check{Name: "lift/search", Family: validation.Lift, Scope: "search", Status: validation.Fail}}}
	d.Moves = []gate.Move{{Channel: "search", Current: 1000, Proposed: 1200, Approved: 1100.5}}
	b, err := MarshalDecision(d)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func sign(t *testing.T, rec []byte, k decisionKey, role string, w ...Waiver) Signoff {
	t.Helper()
	s, err := Sign(rec, k.priv, role, w)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// Tampering cases of the issue: each must fail verification with the
// right message (the signatures are real ed25519 over DSSE PAE, checked
// against RFC 8032 vectors in envelope_test.go).
func TestVerifyDecision(t *testing.T) {
	fin, lead, stranger := newDecisionKey(t, 1), newDecisionKey(t, 2), newDecisionKey(t, 3)
	pol := decisionPolicy(t, fin, lead, "")
	rec := decisionRecord(t, pol, gate.Approve)
	good := []Signoff{sign(t, rec, lead, "lead"), sign(t, rec, fin, "finance")}
	if p := VerifyDecision(rec, "decision.json", good, pol, strings.Repeat("ab", 32)); len(p) != 0 {
		t.Fatalf("clean record: %v", p)
	}

	tampered := bytes.Replace(rec, []byte("1100.5"), []byte("1100.6"), 1)
	swapped := []Signoff{good[0], good[1]}
	swapped[0].Role, swapped[1].Role = "finance", "lead"
	changedPolicy := decisionPolicy(t, fin, lead, "  - {name: more, explain: x, roles: [lead], when: {always: true}}\n")
	cases := []struct {
		name   string
		rec    []byte
		sigs   []Signoff
		pol    *policies.Policy
		data   string
		expect string
	}{
		{"one digit changed", tampered, good, pol, "", "record"},
		{"signatures swapped between roles", rec, swapped, pol, "", "finance"},
		{"key the policy does not list", rec, []Signoff{good[0], sign(t, rec, stranger, "finance")}, pol, "", "does not list key"},
		{"required role missing", rec, good[:1], pol, "", "missing sign-off: finance"},
		{"policy changed after signing", rec, good, changedPolicy, "", "policy changed"},
		{"other data", rec, good, pol, strings.Repeat("cd", 32), "data has sha256"},
		{"waiver by a role not allowed", rec, []Signoff{sign(t, rec, lead, "lead", Waiver{Check: "lift/search", Reason: "x"}), good[1]}, pol, "", "does not let lead waive"},
		{"refused decision", decisionRecord(t, pol, gate.Refuse), nil, pol, "", "cannot be verified as approved"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sigs := c.sigs
			if c.name == "refused decision" {
				sigs = []Signoff{sign(t, c.rec, lead, "lead"), sign(t, c.rec, fin, "finance")}
			}
			p := VerifyDecision(c.rec, "decision.json", sigs, c.pol, c.data)
			if len(p) == 0 || !strings.Contains(strings.Join(p, "\n"), c.expect) {
				t.Fatalf("problems %q, want one mentioning %q", p, c.expect)
			}
		})
	}
	// An allowed waiver passes.
	ok := []Signoff{good[0], sign(t, rec, fin, "finance", Waiver{Check: "lift/search", Reason: "lift test ran in an atypical season"})}
	if p := VerifyDecision(rec, "decision.json", ok, pol, ""); len(p) != 0 {
		t.Fatalf("allowed waiver: %v", p)
	}
}

// What is signed is exactly the bytes written, and the format is stable:
// parse → marshal gives back the same bytes (STYLE.md, after age's header).
func FuzzParseDecision(f *testing.F) {
	f.Add([]byte(`{"format":"sluice.decision.v1","verdict":"approve","moves":[{"channel":"a","current":1,"proposed":2,"approved":1.5,"safe_step":0.5,"safe_step_per_week":0.5,"reasons":null}]}`))
	f.Add([]byte(`{"format":"sluice.decision.v1","inputs":{"data":{"path":"w.csv","sha256":"00"}},"forecast":{"weeks":13}}`))
	f.Add([]byte(`{"format":"x"}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := ParseDecision(data, "f.json")
		if err != nil {
			return
		}
		b1, err := MarshalDecision(d)
		if err != nil {
			return // e.g. a NaN cannot come from JSON, but be safe
		}
		d2, err := ParseDecision(b1, "f.json")
		if err != nil {
			t.Fatalf("re-parse of marshalled record: %v", err)
		}
		b2, _ := MarshalDecision(d2)
		if !bytes.Equal(b1, b2) {
			t.Fatalf("parse → marshal is not stable:\n%s\n%s", b1, b2)
		}
	})
}
