package record

import (
	"testing"

	"sluice/gate"
)

// BenchmarkVerifyDecision times a whole verify of a record with two
// sign-offs: strict parse (keys, canonical form), the derived sign-offs,
// two ed25519 verifications and the policy hash. Inputs are not found
// (no file reads).
func BenchmarkVerifyDecision(b *testing.B) {
	fin, lead := newDecisionKey(b, 1), newDecisionKey(b, 2)
	pol := decisionPolicy(b, fin, lead, "")
	rec := decisionRecord(b, pol, gate.Approve)
	sigs := &Signatures{Signoffs: []Signoff{sign(b, rec, lead, "lead"), sign(b, rec, fin, "finance")}}
	req := VerifyRequest{Record: rec, Source: "d.json", Signatures: sigs, Policy: pol, Now: verifyNow}
	if v := Verify(req); len(v.Problems) != 0 {
		b.Fatal(v.Problems)
	}
	b.SetBytes(int64(len(rec)))
	for b.Loop() {
		Verify(req)
	}
}
