package record

import (
	"bytes"
	"errors"
	"reflect"
	"testing"
	"time"

	"sluice/gate"
	"sluice/policies"
)

// FuzzParseSignatures fuzzes the whole signatures file, withdrawals
// included (seed corpus in testdata/fuzz/FuzzParseSignatures): what it
// accepts marshals back to bytes that parse to the same file, and Verify
// judges it without a panic. It runs in microseconds; use a short
// -fuzzminimizetime.
func FuzzParseSignatures(f *testing.F) {
	fin, lead := newDecisionKey(f, 1), newDecisionKey(f, 2)
	pol := decisionPolicy(f, fin, lead, "")
	rec := decisionRecord(f, pol, gate.Approve)
	f.Fuzz(func(t *testing.T, data []byte) {
		got, err := ParseSignatures(data)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v is not a *ParseError", err)
			}
			return
		}
		m, err := MarshalSignatures(got)
		if err != nil {
			t.Fatalf("accepted but cannot marshal: %v", err)
		}
		back, err := ParseSignatures(m)
		if err != nil {
			t.Fatalf("own output does not parse: %v\n%s", err, m)
		}
		if !reflect.DeepEqual(back, got) {
			t.Fatalf("round trip changed the file:\n%+v\n%+v", got, back)
		}
		if m2, _ := MarshalSignatures(back); !bytes.Equal(m, m2) {
			t.Fatalf("parse → marshal not exact:\n%s\n%s", m, m2)
		}
		v := Verify(VerifyRequest{Record: rec, Source: "d.json", Signatures: got, Policy: pol, Now: verifyNow})
		for _, s := range v.Signed {
			if !policyHasRole(pol, s.Role) {
				t.Fatalf("a sign-off in role %q the policy lacks was counted", s.Role)
			}
		}
	})
}

func policyHasRole(p *policies.Policy, role string) bool {
	_, ok := p.Roles[role]
	return ok
}

// The seed corpus's valid file: two sign-offs, one withdrawn.
func TestSignaturesSeedIsValid(t *testing.T) {
	fin, lead := newDecisionKey(t, 1), newDecisionKey(t, 2)
	pol := decisionPolicy(t, fin, lead, "")
	rec := decisionRecord(t, pol, gate.Approve)
	w, err := Withdraw(rec, fin.priv, "finance", signedAt.Add(time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	file := &Signatures{Signoffs: []Signoff{sign(t, rec, lead, "lead")}, Withdrawals: []Signoff{w}}
	b, err := MarshalSignatures(file)
	if err != nil {
		t.Fatal(err)
	}
	got, err := ParseSignatures(b)
	if err != nil || len(got.Withdrawals) != 1 {
		t.Fatalf("%v %+v", err, got)
	}
	v := Verify(VerifyRequest{Record: rec, Source: "d.json", Signatures: got, Policy: pol, Now: verifyNow})
	if len(v.Withdrawn) != 1 || len(v.Signed) != 1 {
		t.Fatalf("withdrawn %d signed %d: %q", len(v.Withdrawn), len(v.Signed), v.Problems)
	}
}
