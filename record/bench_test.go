package record

import (
	"math/rand/v2"
	"testing"
)

// record50KB is a 50 KB stand-in for decision.json, from a seeded stream
// (PCG seed 50, 51) so every run signs the same bytes.
func record50KB() []byte {
	r := rand.New(rand.NewPCG(50, 51))
	b := make([]byte, 50<<10)
	for i := range b {
		b[i] = byte(' ' + r.IntN(95)) // printable ASCII, like JSON text
	}
	return b
}

func BenchmarkSign50KB(b *testing.B) {
	rec := record50KB()
	ws := []Waiver{{Check: "holdout_mape", Reason: "short history"}}
	b.SetBytes(int64(len(rec)))
	for b.Loop() {
		if _, err := Sign(rec, financeKey, "finance", ws); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkVerify50KB(b *testing.B) {
	rec := record50KB()
	s, err := Sign(rec, financeKey, "finance", []Waiver{{Check: "holdout_mape", Reason: "short history"}})
	if err != nil {
		b.Fatal(err)
	}
	pub := pubOf(financeKey)
	b.SetBytes(int64(len(rec)))
	for b.Loop() {
		if err := VerifySignoff(rec, s, pub); err != nil {
			b.Fatal(err)
		}
	}
}
