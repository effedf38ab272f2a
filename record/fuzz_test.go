package record

import (
	"bytes"
	"errors"
	"reflect"
	"testing"
	"time"

	"pgregory.net/rapid"
)

// FuzzParseSignoffs fuzzes the signatures-file parser behind ReadSignoffs
// (seed corpus in testdata/fuzz/FuzzParseSignoffs). Whatever it accepts
// must marshal, and the marshalled bytes must parse back to the same
// sign-offs and marshal to the same bytes: parse → marshal is exact on
// every file this package writes. The verifier must not panic on it.
func FuzzParseSignoffs(f *testing.F) {
	f.Add([]byte(`{"format":"sluice.signatures.v1","signoffs":[]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		got, err := ParseSignoffs(data)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v is not a *ParseError", err)
			}
			return
		}
		m, err := MarshalSignoffs(got)
		if err != nil {
			t.Fatalf("accepted but cannot marshal: %v", err)
		}
		back, err := ParseSignoffs(m)
		if err != nil {
			t.Fatalf("own output does not parse: %v\n%s", err, m)
		}
		if !reflect.DeepEqual(back, got) {
			t.Fatalf("round trip changed the sign-offs:\n%+v\n%+v", got, back)
		}
		m2, _ := MarshalSignoffs(back)
		if !bytes.Equal(m, m2) {
			t.Fatalf("parse → marshal not exact:\n%s\n%s", m, m2)
		}
		Problems(testRecord, got, policyKeys)
		SignedRoles(testRecord, got, policyKeys)
	})
}

func genSignoff(t *rapid.T) Signoff {
	s := Signoff{
		Role:  rapid.StringMatching(`[A-Za-z0-9][A-Za-z0-9._-]{0,20}`).Draw(t, "role"),
		KeyID: rapid.StringMatching(`[0-9a-f]{16}`).Draw(t, "keyid"),
		Envelope: Envelope{
			Payload:     rapid.SliceOfN(rapid.Byte(), 0, 200).Draw(t, "payload"),
			PayloadType: rapid.StringN(1, 80, -1).Draw(t, "type"),
			Signatures: []Signature{{
				KeyID: rapid.String().Draw(t, "sigkeyid"),
				Sig:   rapid.SliceOfN(rapid.Byte(), 64, 64).Draw(t, "sig"),
			}},
		},
	}
	if rapid.Bool().Draw(t, "timed") {
		s.SignedAt = time.Unix(rapid.Int64Range(-62135596800, 253402300799).Draw(t, "unix"), 0).UTC()
	}
	checks := rapid.SliceOfDistinct(rapid.StringN(1, 30, -1).Filter(nonBlank), func(s string) string { return s }).Draw(t, "checks")
	for i, c := range checks {
		s.Waivers = append(s.Waivers, Waiver{Check: c, Reason: rapid.StringN(1, 60, -1).Filter(nonBlank).Draw(t, "reason"+string(rune('a'+i%26)))})
	}
	return s
}

func nonBlank(s string) bool { return len(bytes.TrimSpace([]byte(s))) > 0 }

// TestSignoffsFileRoundTrip: for any valid sign-offs, marshal → parse gives
// them back and marshal → parse → marshal gives identical bytes.
func TestSignoffsFileRoundTrip(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		ss := rapid.SliceOfN(rapid.Custom(genSignoff), 0, 4).Draw(t, "signoffs")
		m, err := MarshalSignoffs(ss)
		if err != nil {
			t.Fatal(err)
		}
		back, err := ParseSignoffs(m)
		if err != nil {
			t.Fatalf("%v\n%s", err, m)
		}
		if len(ss) == 0 {
			ss = []Signoff{}
		}
		if !reflect.DeepEqual(back, ss) {
			t.Fatalf("round trip:\n%+v\n%+v", ss, back)
		}
		m2, _ := MarshalSignoffs(back)
		if !bytes.Equal(m, m2) {
			t.Fatal("parse → marshal changed the bytes")
		}
	})
}

// TestSignVerifyProperty: any record signed in any valid role with any
// waivers verifies, and changing any one byte of the record is caught.
func TestSignVerifyProperty(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		rec := rapid.SliceOfN(rapid.Byte(), 1, 300).Draw(t, "record")
		g := genSignoff(t)
		s, err := SignAt(rec, financeKey, g.Role, g.Waivers, g.SignedAt)
		if err != nil {
			t.Fatal(err)
		}
		if err := VerifySignoff(rec, s, pubOf(financeKey)); err != nil {
			t.Fatal(err)
		}
		if p := Problems(rec, []Signoff{s}, Keyring{g.Role: {pubOf(financeKey)}}); p != nil {
			t.Fatal(p)
		}
		bad := bytes.Clone(rec)
		bad[rapid.IntRange(0, len(rec)-1).Draw(t, "at")] ^= byte(rapid.IntRange(1, 255).Draw(t, "xor"))
		if err := VerifySignoff(bad, s, pubOf(financeKey)); !errors.Is(err, ErrRecordChanged) {
			t.Fatalf("changed record: %v", err)
		}
	})
}
