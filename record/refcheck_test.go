package record

import (
	"crypto/ed25519"
	"crypto/x509"
	"encoding/base64"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
	"time"

	"sluice/internal/refcheck"
	"sluice/policies"
)

// TestCrossCheckPythonCryptography has Debian's python3-cryptography
// (OpenSSL underneath) check a signatures file written by AppendSignoff,
// with the key files it signed with (testdata/crosscheck_signoff.py): the
// PEM files load there, its key id (SHA-256 of the PKIX DER) equals ours,
// each payload is the record's bytes, each payload type is rebuilt from
// the documented format, each signature verifies over a PAE it computes
// itself, and its own ed25519 signature is bit-identical to ours; the same
// for a withdrawal (record.Withdraw), and every signature carries its
// signing time in the signed payload type. The key fingerprints a policy
// pins (policies.Fingerprint) match python's SHA-256 of the DER.
// checked is what python found for one sign-off or withdrawal.
type checked struct {
	Role            string
	PayloadIsRecord bool `json:"payload_is_record"`
	TypeMatches     bool `json:"type_matches"`
	HasTime         bool `json:"has_time"`
	Verifies        bool
	ResignIdentical bool `json:"resign_identical"`
}

func TestCrossCheckPythonCryptography(t *testing.T) {
	dir := t.TempDir()
	rec := filepath.Join(dir, "decision.json")
	if err := os.WriteFile(rec, testRecord, 0o644); err != nil {
		t.Fatal(err)
	}
	type keyFiles struct {
		PrivatePEM string `json:"private_pem"`
		PublicPEM  string `json:"public_pem"`
	}
	keys := map[string]keyFiles{}
	ids := map[string]string{}
	fps := map[string]string{}
	signers := []struct {
		role    string
		seed    uint64
		waivers []Waiver
		at      time.Time
	}{
		{"finance", 11, []Waiver{{"holdout_mape", "Prüfung <2y & neuer Kanal \"TV\""}, {"stability", "one outlier week"}}, time.Date(2026, 4, 1, 9, 0, 0, 0, time.UTC)},
		{"marketing", 12, nil, time.Date(2026, 4, 2, 16, 30, 5, 0, time.UTC)},
		{"analytics", 13, nil, time.Date(2026, 4, 2, 17, 0, 0, 0, time.UTC)}, // withdrawn below
	}
	for _, s := range signers {
		keyPath, pubPath, err := GenerateKeyFiles(filepath.Join(dir, s.role), seededReader(s.seed))
		if err != nil {
			t.Fatal(err)
		}
		key, _, err := LoadPrivateKey(keyPath)
		if err != nil {
			t.Fatal(err)
		}
		so, err := SignAt(testRecord, key, s.role, s.waivers, s.at)
		if err != nil {
			t.Fatal(err)
		}
		if err := AppendSignoff(rec, so); err != nil {
			t.Fatal(err)
		}
		priv, _ := os.ReadFile(keyPath)
		pub, _ := os.ReadFile(pubPath)
		keys[s.role] = keyFiles{string(priv), string(pub)}
		ids[s.role] = KeyID(key.Public().(ed25519.PublicKey))
		der, _ := x509.MarshalPKIXPublicKey(key.Public())
		fps[s.role] = policies.Fingerprint(der)
	}
	akey, _, err := LoadPrivateKey(filepath.Join(dir, "analytics.key"))
	if err != nil {
		t.Fatal(err)
	}
	w, err := Withdraw(testRecord, akey, "analytics", time.Date(2026, 4, 3, 8, 0, 0, 0, time.UTC))
	if err != nil {
		t.Fatal(err)
	}
	if err := WithdrawSignoff(rec, w, akey.Public().(ed25519.PublicKey)); err != nil {
		t.Fatal(err)
	}
	sigFile, err := os.ReadFile(SignaturesPath(rec))
	if err != nil {
		t.Fatal(err)
	}
	req, _ := json.Marshal(map[string]any{
		"record_b64": base64.StdEncoding.EncodeToString(testRecord),
		"signatures": string(sigFile),
		"keys":       keys,
	})
	out := refcheck.Python(t, []string{"cryptography"}, "testdata/crosscheck_signoff.py", req)
	var res struct {
		Format string
		Keys   map[string]struct {
			PairMatches bool   `json:"pair_matches"`
			KeyID       string `json:"keyid"`
			Fingerprint string
		}
		Signoffs, Withdrawals []checked
	}
	if err := json.Unmarshal(out, &res); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	if res.Format != SignaturesFormat || len(res.Signoffs) != 2 || len(res.Withdrawals) != 1 || res.Withdrawals[0].Role != "analytics" {
		t.Fatalf("python saw %s", out)
	}
	for role, k := range res.Keys {
		if !k.PairMatches || k.KeyID != ids[role] || k.Fingerprint != fps[role] {
			t.Errorf("%s: python key id %s fingerprint %s (pair matches %v), ours %s %s", role, k.KeyID, k.Fingerprint, k.PairMatches, ids[role], fps[role])
		}
	}
	for _, s := range append(res.Signoffs, res.Withdrawals...) {
		if !s.PayloadIsRecord || !s.TypeMatches || !s.HasTime || !s.Verifies || !s.ResignIdentical {
			t.Errorf("%s: python found %+v", s.Role, s)
		}
	}
}
