package record

import (
	"bytes"
	"crypto/ed25519"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"sluice/gate"
	"sluice/policies"
	"sluice/validation"
)

type decisionKey struct {
	priv ed25519.PrivateKey
	pem  string
}

func newDecisionKey(t testing.TB, seed uint64) decisionKey {
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
func decisionPolicy(t testing.TB, finance, lead decisionKey, extra string) *policies.Policy {
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

// decisionRecord is a record under p whose list of required sign-offs is
// the one the policy gives (gate.RequiredSignoffs is tested against
// hand-worked cases in gate/signoff_test.go).
func decisionRecord(t testing.TB, p *policies.Policy, verdict gate.Verdict) []byte {
	t.Helper()
	return marshalRecord(t, decisionOf(p, verdict))
}

func decisionOf(p *policies.Policy, verdict gate.Verdict) *Decision {
	d := &Decision{Format: DecisionFormat, Tool: "sluice", Version: "test", Seed: 7, KPI: "revenue",
		Channels: []string{"search"}, Horizon: 13, PolicySHA256: SHA256Hex(p.Raw),
		Support: []gate.SupportRange{{Low: 800, High: 1500}},
		Inputs:  map[string]Input{"data": {Path: "testdata/no-such-weekly.csv", SHA256: strings.Repeat("ab", 32)}},
		Caution: Caution}
	d.Verdict = verdict
	d.Checks = []gate.CheckUse{{Check: validation.Check{Name: "lift/search", Family: validation.Lift, Scope: "search", Status: validation.Fail}}}
	d.Moves = []gate.Move{{Channel: "search", Current: 1000, Proposed: 1200, Approved: 1100.5}}
	d.SignoffsRequired = gate.RequiredSignoffs(p, &d.Decision, d.Support, d.Horizon)
	return d
}

func marshalRecord(t testing.TB, d *Decision) []byte {
	t.Helper()
	b, err := MarshalDecision(d)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// signedAt is the signing time of the test sign-offs; verifyNow is when
// the tests verify, a day later.
var (
	signedAt  = time.Date(2026, 3, 31, 9, 0, 0, 0, time.UTC)
	verifyNow = signedAt.Add(24 * time.Hour)
)

func sign(t testing.TB, rec []byte, k decisionKey, role string, w ...Waiver) Signoff {
	t.Helper()
	s, err := SignAt(rec, k.priv, role, w, signedAt)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func verifyProblems(rec []byte, sigs []Signoff, p *policies.Policy, files map[string]string) []string {
	return Verify(VerifyRequest{Record: rec, Source: "decision.json", Signatures: &Signatures{Signoffs: sigs},
		Policy: p, Files: files, Now: verifyNow}).Problems
}

// Tampering cases: each must fail verification with the right message
// (the signatures are real ed25519 over DSSE PAE, checked against RFC 8032
// vectors in envelope_test.go).
func TestVerifyDecision(t *testing.T) {
	fin, lead, stranger := newDecisionKey(t, 1), newDecisionKey(t, 2), newDecisionKey(t, 3)
	pol := decisionPolicy(t, fin, lead, "")
	rec := decisionRecord(t, pol, gate.Approve)
	good := []Signoff{sign(t, rec, lead, "lead"), sign(t, rec, fin, "finance")}
	if p := verifyProblems(rec, good, pol, nil); len(p) != 0 {
		t.Fatalf("clean record: %v", p)
	}
	dir := t.TempDir()
	otherData := filepath.Join(dir, "other.csv")
	if err := os.WriteFile(otherData, []byte("week,revenue\n"), 0o644); err != nil {
		t.Fatal(err)
	}

	tampered := bytes.Replace(rec, []byte("1100.5"), []byte("1100.6"), 1)
	swapped := []Signoff{good[0], good[1]}
	swapped[0].Role, swapped[1].Role = "finance", "lead"
	changedPolicy := decisionPolicy(t, fin, lead, "  - {name: more, explain: x, roles: [lead], when: {always: true}}\n")
	// The record's list emptied, with the record signed as it now is: the
	// policy still requires both roles.
	emptied := decisionOf(pol, gate.Approve)
	emptied.SignoffsRequired = []gate.Signoff{}
	emptiedRec := marshalRecord(t, emptied)
	// Only the lead left in the list, and the lead signs alone.
	leadOnly := decisionOf(pol, gate.Approve)
	leadOnly.SignoffsRequired = leadOnly.SignoffsRequired[:1]
	leadOnlyRec := marshalRecord(t, leadOnly)
	unsigned := decisionOf(pol, gate.Approve)
	unsigned.Support = nil
	unsignedRec := marshalRecord(t, unsigned)
	undated, _ := Sign(rec, fin.priv, "finance", nil)
	future, _ := SignAt(rec, fin.priv, "finance", nil, verifyNow.Add(time.Hour))
	cases := []struct {
		name   string
		rec    []byte
		sigs   []Signoff
		pol    *policies.Policy
		files  map[string]string
		expect string
	}{
		{"one digit changed", tampered, good, pol, nil, "record"},
		{"signatures swapped between roles", rec, swapped, pol, nil, "finance"},
		{"key the policy does not list", rec, []Signoff{good[0], sign(t, rec, stranger, "finance")}, pol, nil, "does not list key"},
		{"required role missing", rec, good[:1], pol, nil, "missing sign-off: finance"},
		{"policy changed after signing", rec, good, changedPolicy, nil, "policy changed"},
		{"other data", rec, good, pol, map[string]string{"data": otherData}, "the data changed after the decision"},
		{"waiver by a role not allowed", rec, []Signoff{sign(t, rec, lead, "lead", Waiver{Check: "lift/search", Reason: "x"}), good[1]}, pol, nil, "does not let lead waive"},
		{"refused decision", decisionRecord(t, pol, gate.Refuse), nil, pol, nil, "cannot be verified as approved"},
		{"list of required sign-offs emptied", emptiedRec, nil, pol, nil, "it leaves out lead (rule always), finance (rule always)"},
		{"only the lead listed, the lead signs", leadOnlyRec, []Signoff{sign(t, leadOnlyRec, lead, "lead")}, pol, nil, "missing sign-off: finance"},
		{"support ranges removed", unsignedRec, nil, pol, nil, "cannot be derived"},
		{"no signing time", rec, []Signoff{good[0], undated}, pol, nil, "carries no signing time"},
		{"signed in the future", rec, []Signoff{good[0], future}, pol, nil, "in the future"},
		{"an input not named", rec, good, pol, map[string]string{"plan": otherData}, "names no plan input"},
		{"a file given that does not exist", rec, good, pol, map[string]string{"data": filepath.Join(dir, "none.csv")}, "none.csv, given to check, does not exist"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sigs := c.sigs
			if c.name == "refused decision" {
				sigs = []Signoff{sign(t, c.rec, lead, "lead"), sign(t, c.rec, fin, "finance")}
			}
			p := verifyProblems(c.rec, sigs, c.pol, c.files)
			if len(p) == 0 || !strings.Contains(strings.Join(p, "\n"), c.expect) {
				t.Fatalf("problems %q, want one mentioning %q", p, c.expect)
			}
		})
	}
	// An allowed waiver passes.
	ok := []Signoff{good[0], sign(t, rec, fin, "finance", Waiver{Check: "lift/search", Reason: "lift test ran in an atypical season"})}
	if p := verifyProblems(rec, ok, pol, nil); len(p) != 0 {
		t.Fatalf("allowed waiver: %v", p)
	}
	// The data file found: intact when it hashes as recorded.
	dataRec := decisionOf(pol, gate.Approve)
	dataRec.Inputs["data"] = Input{Path: otherData, SHA256: SHA256Hex([]byte("week,revenue\n"))}
	drb := marshalRecord(t, dataRec)
	v := Verify(VerifyRequest{Record: drb, Source: "d.json", Signatures: &Signatures{Signoffs: []Signoff{sign(t, drb, lead, "lead"), sign(t, drb, fin, "finance")}},
		Policy: pol, Now: verifyNow})
	if len(v.Problems) != 0 || len(v.Inputs) != 2 || v.Inputs[1] != (InputCheck{Name: "data", Path: otherData, State: Intact}) {
		t.Fatalf("intact data: %+v %q", v.Inputs, v.Problems)
	}
	// Not found is reported, not a failure.
	v = Verify(VerifyRequest{Record: rec, Source: "d.json", Signatures: &Signatures{Signoffs: good}, Policy: pol, Now: verifyNow})
	if len(v.Problems) != 0 || v.Inputs[1].State != NotFound {
		t.Fatalf("missing data: %+v %q", v.Inputs, v.Problems)
	}
}

// The policy's signing age: a sign-off older than max_age_days fails, one
// within it passes (the boundary is inclusive: exactly max age still holds).
func TestVerifyMaxAge(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	pol := decisionPolicy(t, fin, lead, "signing: {max_age_days: 30}\n")
	rec := decisionRecord(t, pol, gate.Approve)
	sigs := &Signatures{Signoffs: []Signoff{sign(t, rec, lead, "lead"), sign(t, rec, fin, "finance")}}
	for _, c := range []struct {
		now  time.Time
		fail bool
	}{{signedAt.Add(30 * 24 * time.Hour), false}, {signedAt.Add(30*24*time.Hour + time.Second), true}} {
		v := Verify(VerifyRequest{Record: rec, Source: "d.json", Signatures: sigs, Policy: pol, Now: c.now})
		if got := strings.Join(v.Problems, "\n"); (got != "") != c.fail || c.fail && !strings.Contains(got, "more than the policy's 30 days ago") {
			t.Errorf("now %s: problems %q", c.now, got)
		}
	}
}

// A policy that requires nobody's signature verifies a record only when it
// says so; then the result says no sign-off is required.
func TestVerifyNoSignoffRequired(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	src := strings.Replace(string(decisionPolicy(t, fin, lead, "").Raw),
		"  - {name: always, explain: every decision, roles: [lead, finance], when: {always: true}}\n",
		"  - {name: huge, roles: [finance], when: {moved_above: 1e12}}\n", 1)
	for _, allow := range []bool{false, true} {
		text := src
		if allow {
			text += "signing: {allow_unsigned: true}\n"
		}
		pol, err := policies.Parse([]byte(text), "p.yaml")
		if err != nil {
			t.Fatal(err)
		}
		rec := decisionRecord(t, pol, gate.Approve)
		v := Verify(VerifyRequest{Record: rec, Source: "d.json", Policy: pol, Now: verifyNow})
		if allow != (len(v.Problems) == 0) || allow != v.NoSignoffRequired {
			t.Errorf("allow_unsigned %v: problems %q, no sign-off required %v", allow, v.Problems, v.NoSignoffRequired)
		}
	}
}

// A withdrawn sign-off no longer counts and the withdrawal is reported; only
// the signer can withdraw; signing again after withdrawing counts.
func TestWithdraw(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	pol := decisionPolicy(t, fin, lead, "")
	rec := decisionRecord(t, pol, gate.Approve)
	dir := t.TempDir()
	path := filepath.Join(dir, "decision.json")
	if err := os.WriteFile(path, rec, 0o644); err != nil {
		t.Fatal(err)
	}
	for _, s := range []Signoff{sign(t, rec, lead, "lead"), sign(t, rec, fin, "finance")} {
		if err := AppendSignoff(path, s); err != nil {
			t.Fatal(err)
		}
	}
	w, err := Withdraw(rec, fin.priv, "finance", signedAt.Add(time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	if err := WithdrawSignoff(path, w, lead.priv.Public().(ed25519.PublicKey)); err == nil {
		t.Fatal("a withdrawal checked with another key was accepted")
	}
	if err := WithdrawSignoff(path, w, fin.priv.Public().(ed25519.PublicKey)); err != nil {
		t.Fatal(err)
	}
	file, err := ReadSignatures(SignaturesPath(path))
	if err != nil {
		t.Fatal(err)
	}
	v := Verify(VerifyRequest{Record: rec, Source: path, Signatures: file, Policy: pol, Now: verifyNow})
	if len(v.Withdrawn) != 1 || !strings.Contains(strings.Join(v.Problems, "\n"), "missing sign-off: finance") {
		t.Fatalf("after withdrawal: withdrawn %d, problems %q", len(v.Withdrawn), v.Problems)
	}
	// A sign-off put back from an old copy of the file is refused as withdrawn.
	file.Signoffs = append(file.Signoffs, sign(t, rec, fin, "finance"))
	v = Verify(VerifyRequest{Record: rec, Source: path, Signatures: file, Policy: pol, Now: verifyNow})
	if !strings.Contains(strings.Join(v.Problems, "\n"), "was withdrawn at 2026-03-31T10:00:00Z") {
		t.Fatalf("restored sign-off: %q", v.Problems)
	}
	// Signing again later counts.
	again, _ := SignAt(rec, fin.priv, "finance", nil, signedAt.Add(2*time.Hour))
	file.Signoffs[len(file.Signoffs)-1] = again
	v = Verify(VerifyRequest{Record: rec, Source: path, Signatures: file, Policy: pol, Now: verifyNow})
	if len(v.Problems) != 0 {
		t.Fatalf("signed again: %q", v.Problems)
	}
}

// Strict decoding: a key given twice, or in another letter case, is
// refused with its line and column; Go's encoding/json alone would take
// the last duplicate and match keys case-insensitively.
func TestParseDecisionStrict(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	rec := decisionRecord(t, decisionPolicy(t, fin, lead, ""), gate.Refuse)
	at := bytes.Index(rec, []byte(`  "verdict": "refuse",`))
	if at < 0 {
		t.Fatal("no verdict line")
	}
	line := 1 + bytes.Count(rec[:at], []byte("\n"))
	insert := func(s string) []byte {
		return append(append(append([]byte{}, rec[:at]...), s...), rec[at:]...)
	}
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"case variant", insert(`  "VERDICT": "approve",` + "\n"), fmt.Sprintf("d.json:%d:3: key \"verdict\" differs from key \"VERDICT\" only in letter case", line+1)},
		{"duplicate", insert(`  "verdict": "approve",` + "\n"), fmt.Sprintf("d.json:%d:3: key \"verdict\" appears twice", line+1)},
		{"lone case variant", bytes.Replace(rec, []byte(`"verdict"`), []byte(`"Verdict"`), 1), fmt.Sprintf("d.json:%d:4: the record is not in the form sluice writes", line)},
		{"reformatted", bytes.Replace(rec, []byte("\n  "), []byte("\n   "), 1), "d.json:2:3: the record is not in the form sluice writes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseDecision(c.data, "d.json")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("got %v, want ...%s...", err, c.want)
			}
		})
	}
	if _, err := ParseDecision(rec, "d.json"); err != nil {
		t.Fatalf("the record as written: %v", err)
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

// TestParseDecisionEffectiveness: the effectiveness choice is part of the
// strict record: written and read back byte for byte (the record's own
// canonical form), an unknown key inside it is refused naming the file
// and the key (the record's decoder gives no line for unknown fields), and a record without it (every record before the choice) reads.
func TestParseDecisionEffectiveness(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	d := decisionOf(decisionPolicy(t, fin, lead, ""), gate.Approve)
	d.Effectiveness = &EffectChoice{Model: "drifting", Channels: []string{"search"}, Evidence: "invented for the test",
		Preferred: "drifting", BacktestRatio: 0.85, Changes: []EffectChange{{Channel: "search", Change: 1.3, Low: 1.1, High: 1.5, Z: 3.2, Named: true}}}
	rec := marshalRecord(t, d)
	got, err := ParseDecision(rec, "d.json")
	if err != nil {
		t.Fatalf("the record as written: %v", err)
	}
	if got.Effectiveness == nil || got.Effectiveness.Model != "drifting" || len(got.Effectiveness.Changes) != 1 || !got.Effectiveness.Changes[0].Named {
		t.Fatalf("read back %+v", got.Effectiveness)
	}
	if again := marshalRecord(t, got); !bytes.Equal(again, rec) {
		t.Error("parse → marshal changed the bytes")
	}
	at := bytes.Index(rec, []byte(`    "model": "drifting",`))
	if at < 0 {
		t.Fatal("no model line")
	}
	bad := append(append(append([]byte{}, rec[:at]...), `    "modle": "constant",`+"\n"...), rec[at:]...)
	_, err = ParseDecision(bad, "d.json")
	if err == nil || !strings.HasPrefix(err.Error(), "d.json:") || !strings.Contains(err.Error(), `unknown field "modle"`) {
		t.Errorf("unknown key inside effectiveness: got %v, want d.json: ... unknown field \"modle\"", err)
	}
	d.Effectiveness = nil
	if _, err := ParseDecision(marshalRecord(t, d), "d.json"); err != nil {
		t.Errorf("a record without the field: %v", err)
	}
}
