package record_test

import (
	"crypto/ed25519"
	"fmt"

	"sluice/record"
)

func Example() {
	// A fixed seed keeps the example's output stable; real keys come from
	// GenerateKeyFiles and LoadPrivateKey.
	seed := make([]byte, ed25519.SeedSize)
	seed[0] = 1
	financeKey := ed25519.NewKeyFromSeed(seed)
	policy := record.Keyring{"finance": {financeKey.Public().(ed25519.PublicKey)}}

	decision := []byte(`{"verdict": "downsize"}` + "\n")
	s, err := record.Sign(decision, financeKey, "finance",
		[]record.Waiver{{Check: "holdout_mape", Reason: "short history"}})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(record.SignaturesPath("q3/decision.json"))
	fmt.Println(s.Envelope.PayloadType)
	roles, waivers := record.SignedRoles(decision, []record.Signoff{s}, policy)
	fmt.Println(roles, waivers[0].Role, waivers[0].Waiver.Check)

	edited := []byte(`{"verdict": "approve"}` + "\n")
	for _, p := range record.Problems(edited, []record.Signoff{s}, policy) {
		fmt.Println(p)
	}
	// The digests below were checked outside Go: the waiver digest and the
	// record sums with sha256sum over the same bytes, the key id with
	// `openssl pkey -pubout -outform DER | sha256sum` on the seed's PKCS#8.
	//
	// Output:
	// q3/decision.signatures.json
	// application/vnd.sluice.decision+json; role=finance; waivers-sha256=c2708dd5810f81756a6f36a283add9ed628c88182755d8589cee06f78546eeed
	// [finance] finance holdout_mape
	// sign-off 1 (role "finance", key 6b7b147fed43f676): the record's bytes differ from the bytes that were signed (signed sha256 081e89d2c6d87920, now 4816287a2946297a)
}
