package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"io/fs"
	"mime"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"
)

// Test signers: the secret keys of RFC 8032 section 7.1 TEST 1, 2 and 3.
var (
	financeKey   = ed25519.NewKeyFromSeed(mustHex("9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60"))
	marketingKey = ed25519.NewKeyFromSeed(mustHex("4ccd089b28ff96da9db6c346ec114e0f5b8a319f35aba624da8cf6ed4fb8a6fb"))
	outsiderKey  = ed25519.NewKeyFromSeed(mustHex("c5aa8df43f9f837bedb7442f31dcb7b166d38535076f094b85ce3a2e0b4458f7"))
)

func mustHex(s string) []byte {
	b, err := hex.DecodeString(s)
	if err != nil {
		panic(err)
	}
	return b
}

func pubOf(k ed25519.PrivateKey) ed25519.PublicKey { return k.Public().(ed25519.PublicKey) }

// testRecord stands in for decision.json: any bytes will do, the signature
// layer never parses them.
var testRecord = []byte("{\n  \"format\": \"sluice.decision.v1\",\n  \"verdict\": \"downsize\"\n}\n")

var policyKeys = Keyring{
	"finance":   {pubOf(financeKey)},
	"marketing": {pubOf(marketingKey)},
}

func mustSign(t testing.TB, key ed25519.PrivateKey, role string, ws []Waiver, at time.Time) Signoff {
	t.Helper()
	s, err := SignAt(testRecord, key, role, ws, at)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestSignedPayloadType checks the documented payload type: written out by
// hand for the plain case, and parsed by the standard library's media-type
// parser (mime, RFC 2045 / RFC 2231 syntax) for the full case, with the
// waiver digest computed here from the documented JSON text.
func TestSignedPayloadType(t *testing.T) {
	s := mustSign(t, financeKey, "finance", nil, time.Time{})
	if want := "application/vnd.sluice.decision+json; role=finance"; s.Envelope.PayloadType != want {
		t.Errorf("payload type %q, want %q", s.Envelope.PayloadType, want)
	}
	ws := []Waiver{{Check: "holdout_mape", Reason: "short history <2y & new channel"}}
	at := time.Date(2026, 3, 31, 11, 0, 0, 5e8, time.FixedZone("CEST", 2*3600))
	s = mustSign(t, financeKey, "finance", ws, at)
	mt, params, err := mime.ParseMediaType(s.Envelope.PayloadType)
	if err != nil {
		t.Fatalf("mime.ParseMediaType(%q): %v", s.Envelope.PayloadType, err)
	}
	digest := sha256.Sum256([]byte(`[{"check":"holdout_mape","reason":"short history <2y & new channel"}]`))
	want := map[string]string{
		"role":           "finance",
		"signed-at":      "2026-03-31T09:00:00Z",
		"waivers-sha256": hex.EncodeToString(digest[:]),
	}
	if mt != PayloadType || !reflect.DeepEqual(params, want) {
		t.Errorf("parsed %q %v, want %q %v", mt, params, PayloadType, want)
	}
	if !s.SignedAt.Equal(time.Date(2026, 3, 31, 9, 0, 0, 0, time.UTC)) || s.SignedAt.Location() != time.UTC {
		t.Errorf("SignedAt = %v, want 2026-03-31 09:00:00 UTC", s.SignedAt)
	}
}

func TestSignVerifyRoundTrip(t *testing.T) {
	ws := []Waiver{{Check: "lift_agreement", Reason: "lift test was run in another season"}}
	s := mustSign(t, financeKey, "finance", ws, time.Date(2026, 4, 1, 8, 30, 0, 0, time.UTC))
	if err := VerifySignoff(testRecord, s, pubOf(financeKey)); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(s.Envelope.Payload, testRecord) {
		t.Error("payload is not the record's exact bytes")
	}
	if s.KeyID != KeyID(pubOf(financeKey)) || s.Envelope.Signatures[0].KeyID != s.KeyID {
		t.Error("key ids do not name the signer")
	}
	// The signature is plain DSSE: ed25519 over PAE(type, record bytes).
	if !ed25519.Verify(pubOf(financeKey), PAE(s.Envelope.PayloadType, testRecord), s.Envelope.Signatures[0].Sig) {
		t.Error("signature is not over PAE(payload type, record)")
	}
	// Signing copies its inputs.
	ws[0].Reason = "changed later"
	if s.Waivers[0].Reason == "changed later" {
		t.Error("Signoff shares the caller's waiver slice")
	}
	// Deterministic: same inputs, same bytes.
	again := mustSign(t, financeKey, "finance", []Waiver{{Check: "lift_agreement", Reason: "lift test was run in another season"}}, time.Date(2026, 4, 1, 8, 30, 0, 0, time.UTC))
	a, _ := MarshalSignoffs([]Signoff{s})
	b, _ := MarshalSignoffs([]Signoff{again})
	if !bytes.Equal(a, b) {
		t.Error("same inputs gave different signatures files")
	}
}

func TestVerifySignoffTampering(t *testing.T) {
	ws := []Waiver{{Check: "holdout_mape", Reason: "short history"}}
	at := time.Date(2026, 4, 1, 8, 30, 0, 0, time.UTC)
	tests := []struct {
		name   string
		change func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey)
		is     error
		want   string
	}{
		{"one byte of the record", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			rec = bytes.Clone(rec)
			rec[len(rec)/2] ^= 1
			return rec, pubOf(financeKey)
		}, ErrRecordChanged, "signed sha256"},
		{"role moved to marketing", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Role = "marketing"
			return rec, pubOf(financeKey)
		}, ErrBindingChanged, `signed for role "finance", but the sign-off claims role "marketing"`},
		{"waiver added", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Waivers = append(slices.Clone(s.Waivers), Waiver{"stability", "x"})
			return rec, pubOf(financeKey)
		}, ErrBindingChanged, "waivers differ"},
		{"waiver dropped", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Waivers = nil
			return rec, pubOf(financeKey)
		}, ErrBindingChanged, "waivers differ"},
		{"waiver reason edited", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Waivers = []Waiver{{"holdout_mape", "short history, fine"}}
			return rec, pubOf(financeKey)
		}, ErrBindingChanged, "waivers differ"},
		{"time edited", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.SignedAt = s.SignedAt.Add(-24 * time.Hour)
			return rec, pubOf(financeKey)
		}, ErrBindingChanged, `signed with time "2026-04-01T08:30:00Z"`},
		{"role and payload type both rewritten", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Role = "marketing"
			s.Envelope.PayloadType = SignedPayloadType("marketing", s.Waivers, s.SignedAt)
			return rec, pubOf(financeKey)
		}, ErrBadSignature, "does not verify"},
		{"signature bit flipped", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Envelope.Signatures[0].Sig[0] ^= 1
			return rec, pubOf(financeKey)
		}, ErrBadSignature, "does not verify"},
		{"another key", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			return rec, pubOf(marketingKey)
		}, ErrBadSignature, KeyID(pubOf(marketingKey))},
		{"key id edited", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.KeyID = KeyID(pubOf(outsiderKey))
			return rec, pubOf(financeKey)
		}, nil, "names key " + KeyID(pubOf(outsiderKey))},
		{"two signatures", func(rec []byte, s *Signoff) ([]byte, ed25519.PublicKey) {
			s.Envelope.Signatures = append(s.Envelope.Signatures, s.Envelope.Signatures[0])
			return rec, pubOf(financeKey)
		}, nil, "holds 2 signatures"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s := mustSign(t, financeKey, "finance", ws, at)
			s.Envelope.Signatures[0].Sig = bytes.Clone(s.Envelope.Signatures[0].Sig)
			rec, pub := tt.change(testRecord, &s)
			err := VerifySignoff(rec, s, pub)
			if err == nil {
				t.Fatal("tampering not detected")
			}
			if tt.is != nil && !errors.Is(err, tt.is) {
				t.Errorf("err = %v, want it to wrap %v", err, tt.is)
			}
			if !strings.Contains(err.Error(), tt.want) {
				t.Errorf("err = %v, want it to contain %q", err, tt.want)
			}
		})
	}
}

func TestProblems(t *testing.T) {
	finance := mustSign(t, financeKey, "finance", []Waiver{{"holdout_mape", "short history"}}, time.Time{})
	marketing := mustSign(t, marketingKey, "marketing", nil, time.Time{})
	fid, mid, oid := KeyID(pubOf(financeKey)), KeyID(pubOf(marketingKey)), KeyID(pubOf(outsiderKey))

	swapped := finance
	swapped.Role = "marketing"
	envSwap := marketing
	envSwap.Envelope = finance.Envelope // finance's envelope under marketing's role and key id
	flipped := finance
	flipped.Envelope.Signatures = []Signature{{KeyID: fid, Sig: bytes.Clone(finance.Envelope.Signatures[0].Sig)}}
	flipped.Envelope.Signatures[0].Sig[5] ^= 0x10

	tests := []struct {
		name     string
		record   []byte
		signoffs []Signoff
		want     []string // substrings, one per problem line, in order
		roles    []string
	}{
		{"all hold", testRecord, []Signoff{finance, marketing}, nil, []string{"finance", "marketing"}},
		{"record changed", append(bytes.Clone(testRecord), ' '), []Signoff{finance}, []string{
			`sign-off 1 (role "finance", key ` + fid + `): the record's bytes differ from the bytes that were signed`}, nil},
		{"signature moved to another role", testRecord, []Signoff{swapped, marketing}, []string{
			`sign-off 1 (role "marketing", key ` + fid + `): the sign-off's role, waivers or time differ from those that were signed: signed for role "finance", but the sign-off claims role "marketing"`},
			[]string{"marketing"}},
		{"envelopes swapped between roles", testRecord, []Signoff{envSwap}, []string{
			`signed for role "finance", but the sign-off claims role "marketing"`}, nil},
		{"key not listed", testRecord, []Signoff{mustSign(t, outsiderKey, "finance", nil, time.Time{})}, []string{
			`sign-off 1 (role "finance", key ` + oid + `): no key listed for "finance", nor for any role, made this signature; the policy does not list key ` + oid}, nil},
		{"key listed for another role", testRecord, []Signoff{mustSign(t, marketingKey, "finance", nil, time.Time{})}, []string{
			`sign-off 1 (role "finance", key ` + mid + `): signed by key ` + mid + `, which the policy lists for "marketing", not for "finance"`}, nil},
		{"unknown role", testRecord, []Signoff{mustSign(t, financeKey, "legal", nil, time.Time{}), finance}, []string{
			`sign-off 1 (role "legal", key ` + fid + `): the policy has no role "legal"`}, []string{"finance"}},
		{"bad signature by a listed key", testRecord, []Signoff{flipped}, []string{
			`the signature does not verify with key ` + fid + ` listed for "finance"`}, nil},
		{"repeated sign-off", testRecord, []Signoff{finance, marketing, finance}, []string{
			`sign-off 3 (role "finance", key ` + fid + `): repeats sign-off 1`}, []string{"finance", "marketing"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := Problems(tt.record, tt.signoffs, policyKeys)
			if len(got) != len(tt.want) {
				t.Fatalf("problems = %q, want %d", got, len(tt.want))
			}
			for i := range got {
				if !strings.Contains(got[i], tt.want[i]) {
					t.Errorf("problem %d = %q\nwant it to contain %q", i, got[i], tt.want[i])
				}
				if strings.Contains(got[i], "\n") {
					t.Errorf("problem %d spans lines", i)
				}
			}
			roles, _ := SignedRoles(tt.record, tt.signoffs, policyKeys)
			if !slices.Equal(roles, tt.roles) {
				t.Errorf("SignedRoles = %q, want %q", roles, tt.roles)
			}
		})
	}
}

func TestSignedRolesWaivers(t *testing.T) {
	f := mustSign(t, financeKey, "finance", []Waiver{{"holdout_mape", "short history"}, {"stability", "known outlier week"}}, time.Time{})
	m := mustSign(t, marketingKey, "marketing", []Waiver{{"lift_agreement", "test ran in Q4"}}, time.Time{})
	bad := mustSign(t, outsiderKey, "finance", []Waiver{{"everything", "trust me"}}, time.Time{})
	roles, ws := SignedRoles(testRecord, []Signoff{m, bad, f}, policyKeys)
	if !slices.Equal(roles, []string{"finance", "marketing"}) {
		t.Errorf("roles %q", roles)
	}
	want := []RoleWaiver{
		{"marketing", KeyID(pubOf(marketingKey)), Waiver{"lift_agreement", "test ran in Q4"}},
		{"finance", KeyID(pubOf(financeKey)), Waiver{"holdout_mape", "short history"}},
		{"finance", KeyID(pubOf(financeKey)), Waiver{"stability", "known outlier week"}},
	}
	if !reflect.DeepEqual(ws, want) {
		t.Errorf("waivers %+v\nwant     %+v", ws, want)
	}
	// One key may be listed for two roles and sign in either.
	both := Keyring{"finance": {pubOf(financeKey)}, "cfo": {pubOf(financeKey)}}
	c := mustSign(t, financeKey, "cfo", nil, time.Time{})
	if p := Problems(testRecord, []Signoff{f, c}, both); p != nil {
		t.Errorf("problems %q", p)
	}
}

func TestSignValidation(t *testing.T) {
	for _, role := range []string{"finance", "cfo.office", "A1_b-2", strings.Repeat("r", 64)} {
		if _, err := Sign(testRecord, financeKey, role, nil); err != nil {
			t.Errorf("role %q: %v", role, err)
		}
	}
	for _, role := range []string{"", "a b", "-x", ".x", "fin;ance", `fi"n`, "é", strings.Repeat("r", 65)} {
		if _, err := Sign(testRecord, financeKey, role, nil); err == nil || !strings.Contains(err.Error(), "role") {
			t.Errorf("role %q: err = %v, want a role error", role, err)
		}
	}
	badWaivers := []struct {
		ws   []Waiver
		want string
	}{
		{[]Waiver{{"", "why"}}, "waivers[0].check: missing"},
		{[]Waiver{{"a", " "}}, "waivers[0].reason: missing"},
		{[]Waiver{{"a", "x"}, {"a", "y"}}, `waivers[1].check: "a" is already waived at waivers[0]`},
		{[]Waiver{{"a", "\xff"}}, "not valid UTF-8"},
	}
	for _, tt := range badWaivers {
		if _, err := Sign(testRecord, financeKey, "finance", tt.ws); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("waivers %q: err = %v, want %q", tt.ws, err, tt.want)
		}
	}
	if _, err := Sign(testRecord, financeKey[:10], "finance", nil); err == nil {
		t.Error("short private key accepted")
	}
	if _, err := SignAt(testRecord, financeKey, "finance", nil, time.Date(10000, 1, 1, 0, 0, 0, 0, time.UTC)); err == nil {
		t.Error("year 10000 accepted")
	}
	if s, _ := Sign(testRecord, financeKey, "finance", []Waiver{}); s.Waivers != nil {
		t.Error("empty waiver list kept")
	}
}

func TestSignaturesPath(t *testing.T) {
	tests := []struct{ in, want string }{
		{"decision.json", "decision.signatures.json"},
		{filepath.Join("q3", "decision.json"), filepath.Join("q3", "decision.signatures.json")},
		{filepath.Join("v1.2", "decision"), filepath.Join("v1.2", "decision.signatures.json")},
		{"decision.2026q2.json", "decision.2026q2.signatures.json"},
	}
	for _, tt := range tests {
		if got := SignaturesPath(tt.in); got != tt.want {
			t.Errorf("SignaturesPath(%q) = %q, want %q", tt.in, got, tt.want)
		}
	}
}

func TestAppendSignoff(t *testing.T) {
	dir := t.TempDir()
	rec := filepath.Join(dir, "decision.json")
	if err := os.WriteFile(rec, testRecord, 0o644); err != nil {
		t.Fatal(err)
	}
	sigPath := filepath.Join(dir, "decision.signatures.json")
	f := mustSign(t, financeKey, "finance", []Waiver{{"holdout_mape", "short history"}}, time.Date(2026, 4, 1, 9, 0, 0, 0, time.UTC))
	m := mustSign(t, marketingKey, "marketing", nil, time.Time{})
	if err := AppendSignoff(rec, f); err != nil {
		t.Fatal(err)
	}
	if err := AppendSignoff(rec, m); err != nil {
		t.Fatal(err)
	}
	got, err := ReadSignoffs(sigPath)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, []Signoff{f, m}) {
		t.Fatalf("read back %+v", got)
	}
	if p := Problems(testRecord, got, policyKeys); p != nil {
		t.Errorf("problems %q", p)
	}
	before, _ := os.ReadFile(sigPath)

	refusals := []struct {
		name string
		s    Signoff
		want string
	}{
		{"same role and key", mustSign(t, financeKey, "finance", nil, time.Time{}), `already holds sign-off 1 for role "finance"`},
		{"role edited", func() Signoff { s := m; s.Role = "cfo"; return s }(), `signed for role "marketing"`},
		{"not a sign-off", Signoff{}, "role: missing"},
		{"made over other bytes", func() Signoff {
			s, _ := Sign([]byte("other"), outsiderKey, "finance", nil)
			return s
		}(), "other bytes than " + rec},
	}
	for _, tt := range refusals {
		err := AppendSignoff(rec, tt.s)
		if err == nil || !strings.Contains(err.Error(), tt.want) || !strings.Contains(err.Error(), "refusing") {
			t.Errorf("%s: err = %v, want a refusal containing %q", tt.name, err, tt.want)
		}
	}
	if after, _ := os.ReadFile(sigPath); !bytes.Equal(after, before) {
		t.Error("a refused append changed the signatures file")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		t.Errorf("directory holds %d entries, want the record and its signatures", len(entries))
	}
	if err := AppendSignoff(filepath.Join(dir, "missing.json"), f); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("missing record: %v", err)
	}
	if _, err := ReadSignoffs(filepath.Join(dir, "none.signatures.json")); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("missing signatures file: %v", err)
	}
}

func TestMarshalSignoffs(t *testing.T) {
	f := mustSign(t, financeKey, "finance", []Waiver{{"holdout_mape", "history <2y & new channel"}}, time.Date(2026, 4, 1, 9, 0, 0, 0, time.UTC))
	m := mustSign(t, marketingKey, "marketing", nil, time.Time{})
	data, err := MarshalSignoffs([]Signoff{f, m})
	if err != nil {
		t.Fatal(err)
	}
	text := string(data)
	if !strings.HasPrefix(text, "{\n  \"format\": \"sluice.signatures.v1\",\n  \"signoffs\": [\n    {\n      \"role\": \"finance\",\n") || !strings.HasSuffix(text, "}\n") {
		t.Errorf("layout:\n%s", text)
	}
	// Field order within a sign-off and within the envelope (DSSE order).
	order := []string{`"role"`, `"keyid"`, `"signed_at"`, `"waivers"`, `"envelope"`, `"payload"`, `"payloadType"`, `"signatures"`, `"keyid"`, `"sig"`}
	at := 0
	for _, k := range order {
		i := strings.Index(text[at:], k)
		if i < 0 {
			t.Fatalf("%s missing or out of order", k)
		}
		at += i
	}
	if strings.Contains(text, `\u003c`) || strings.Contains(text, `\u0026`) {
		t.Error("HTML escaping in the file")
	}
	back, err := ParseSignoffs(data)
	if err != nil {
		t.Fatal(err)
	}
	again, _ := MarshalSignoffs(back)
	if !bytes.Equal(again, data) {
		t.Error("parse → marshal changed the bytes")
	}
	empty, _ := MarshalSignoffs(nil)
	if string(empty) != "{\n  \"format\": \"sluice.signatures.v1\",\n  \"signoffs\": []\n}\n" {
		t.Errorf("empty file = %q", empty)
	}
	if _, err := MarshalSignoffs([]Signoff{{Role: "finance"}}); err == nil || !strings.Contains(err.Error(), "signoffs[0].keyid") {
		t.Errorf("invalid sign-off marshalled: %v", err)
	}
}

func TestReadSignoffsErrors(t *testing.T) {
	f := mustSign(t, financeKey, "finance", []Waiver{{"holdout_mape", "short history"}}, time.Date(2026, 4, 1, 9, 0, 0, 0, time.UTC))
	good, _ := MarshalSignoffs([]Signoff{f})
	sig := f.Envelope.Signatures[0]
	dir := t.TempDir()
	path := filepath.Join(dir, "decision.signatures.json")
	edit := func(old, new string) string {
		if !strings.Contains(string(good), old) {
			t.Fatalf("%q not in the file", old)
		}
		return strings.Replace(string(good), old, new, 1)
	}
	sigB64 := `"sig": "` + f.Envelope.wire().Signatures[0].Sig + `"`
	tests := []struct {
		name, in, want string
	}{
		{"empty", "", path + ": empty file"},
		{"syntax", edit(`"role": "finance",`, `"role": "finance"`), path + ":6:7: invalid character"},
		{"truncated", string(good[:40]), path + ":"},
		{"type", edit(`"role": "finance"`, `"role": 7`), path + ":5:15: signoffs.role: JSON number where string is wanted"},
		{"trailing data", string(good) + "{}\n", path + ":27:1: unexpected data after the JSON object"},
		{"format", edit(`"sluice.signatures.v1"`, `"v0"`), path + `: format: "v0" is not "sluice.signatures.v1"`},
		{"no signoffs", `{"format": "sluice.signatures.v1"}`, path + ": signoffs: missing"},
		{"role", edit(`"role": "finance"`, `"role": "fin ance"`), path + `: signoffs[0].role: "fin ance": use ASCII letters`},
		{"keyid", edit(`"keyid": "`+f.KeyID+`",`+"\n      \"signed_at\"", `"keyid": "ABC",`+"\n      \"signed_at\""), path + `: signoffs[0].keyid: "ABC" is not a key id`},
		{"signed_at", edit(`"2026-04-01T09:00:00Z"`, `"2026-04-01 09:00"`), path + `: signoffs[0].signed_at: "2026-04-01 09:00" is not a UTC time`},
		{"signed_at offset", edit(`"2026-04-01T09:00:00Z"`, `"2026-04-01T11:00:00+02:00"`), `signoffs[0].signed_at`},
		{"waiver reason", edit(`"reason": "short history"`, `"reason": ""`), path + `: signoffs[0].waivers[0].reason: missing`},
		{"payload base64", edit(`"payload": "`, `"payload": "*`), path + `: signoffs[0].envelope.payload: not base64`},
		{"payload type", edit(`"payloadType": "`+strings.ReplaceAll(f.Envelope.PayloadType, `"`, `\"`)+`"`, `"payloadType": ""`), path + `: signoffs[0].envelope.payloadType: missing`},
		{"sig base64", edit(sigB64, `"sig": "%%%"`), path + `: signoffs[0].envelope.signatures[0].sig: not base64`},
		{"sig length", edit(sigB64, `"sig": "AAAA"`), path + `: signoffs[0].envelope.signatures[0].sig: 3 bytes, want an ed25519 signature of 64`},
		{"no signature", regexp.MustCompile(`"signatures": \[[^\]]*\]`).ReplaceAllString(string(good), `"signatures": []`), path + `: signoffs[0].envelope.signatures: a sign-off holds exactly one signature, found 0`},
		{"misspelt field", edit(`"waivers"`, `"wavers"`), path + `: unknown field "wavers"`},
		{"two signatures", edit(sigB64, sigB64+`}, {`+sigB64), path + `: signoffs[0].envelope.signatures: a sign-off holds exactly one signature, found 2`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if err := os.WriteFile(path, []byte(tt.in), 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := ReadSignoffs(path)
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("err = %v\nwant it to contain %q", err, tt.want)
			}
			var pe *ParseError
			if !errors.As(err, &pe) || pe.File != path {
				t.Errorf("err is not a *ParseError naming the file")
			}
		})
	}
	// An empty waiver list is read as none.
	m := mustSign(t, marketingKey, "marketing", nil, time.Time{})
	plain, _ := MarshalSignoffs([]Signoff{m})
	withEmpty := strings.Replace(string(plain), `"envelope"`, `"waivers": [],`+"\n      "+`"envelope"`, 1)
	if got, err := ParseSignoffs([]byte(withEmpty)); err != nil || got[0].Waivers != nil || VerifySignoff(testRecord, got[0], pubOf(marketingKey)) != nil {
		t.Errorf("empty waivers: %v", err)
	}
	// Either base64 alphabet is accepted (DSSE protocol.md), and the
	// rewritten file uses the standard one.
	std := f.Envelope.wire().Signatures[0].Sig
	url := strings.NewReplacer("+", "-", "/", "_").Replace(std)
	if url == std {
		t.Skip("signature has no + or /")
	}
	s, err := ParseSignoffs([]byte(edit(std, url)))
	if err != nil || !bytes.Equal(s[0].Envelope.Signatures[0].Sig, sig.Sig) {
		t.Errorf("URL-safe signature: %v", err)
	}
}
