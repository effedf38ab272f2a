package record

import (
	"crypto/ed25519"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"sluice/gate"
)

// A record made with the signed waivers of an earlier record names that
// record's signatures file as an input. The file grows as people sign the
// earlier record; verify accepts that while every waiver the record applied
// is still signed there, and fails once one is withdrawn.
func TestVerifyWaiversInput(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	pol := decisionPolicy(t, fin, lead, "")
	dir := t.TempDir()
	earlier := filepath.Join(dir, "a", "decision.json")
	os.MkdirAll(filepath.Dir(earlier), 0o755)
	arec := decisionRecord(t, pol, gate.Refuse)
	if err := os.WriteFile(earlier, arec, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := AppendSignoff(earlier, sign(t, arec, fin, "finance", Waiver{Check: "lift/search", Reason: "the lift test ran in a holiday season"})); err != nil {
		t.Fatal(err)
	}
	sp := SignaturesPath(earlier)
	sb, _ := os.ReadFile(sp)

	d := decisionOf(pol, gate.Approve)
	d.Waivers = []gate.WaiverUse{{Waiver: gate.Waiver{Check: "lift/search", Role: "finance"}, Accepted: true}}
	d.Inputs["waivers"] = Input{Path: sp, SHA256: SHA256Hex(sb)}
	d.SignoffsRequired = gate.RequiredSignoffs(pol, &d.Decision, d.Support, d.Horizon)
	rec := marshalRecord(t, d)
	sigs := &Signatures{Signoffs: []Signoff{sign(t, rec, lead, "lead"), sign(t, rec, fin, "finance")}}
	verify := func() *Verification {
		return Verify(VerifyRequest{Record: rec, Source: "b.json", Signatures: sigs, Policy: pol, Now: verifyNow})
	}
	if v := verify(); len(v.Problems) != 0 || v.Inputs[2].State != Intact {
		t.Fatalf("as made: %+v %q", v.Inputs, v.Problems)
	}
	if err := AppendSignoff(earlier, sign(t, arec, lead, "lead")); err != nil {
		t.Fatal(err)
	}
	if v := verify(); len(v.Problems) != 0 || v.Inputs[2].State != Changed || !strings.Contains(v.Inputs[2].Detail, "still signed") {
		t.Fatalf("after another sign-off of the earlier record: %+v %q", v.Inputs, v.Problems)
	}
	w, _ := Withdraw(arec, fin.priv, "finance", signedAt.Add(time.Hour))
	if err := WithdrawSignoff(earlier, w, fin.priv.Public().(ed25519.PublicKey)); err != nil {
		t.Fatal(err)
	}
	if v := verify(); !strings.Contains(strings.Join(v.Problems, "\n"), "the waiver of lift/search by finance that this record applied is no longer signed there") {
		t.Fatalf("after the waiver was withdrawn: %q", v.Problems)
	}
}
