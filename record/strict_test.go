package record

import (
	"bytes"
	"errors"
	"testing"
	"time"
)

// A signatures file with a key given in two letter cases is refused with
// its position: encoding/json alone would keep the last ("lead") while a
// reader keeping the first would see "finance".
func TestParseSignaturesCaseVariantKey(t *testing.T) {
	s, err := SignAt(testRecord, financeKey, "finance", nil, time.Date(2026, 4, 1, 9, 0, 0, 0, time.UTC))
	if err != nil {
		t.Fatal(err)
	}
	good, err := MarshalSignoffs([]Signoff{s})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ParseSignatures(good); err != nil {
		t.Fatalf("the file as written: %v", err)
	}
	bad := bytes.Replace(good, []byte(`"role": "finance",`), []byte(`"role": "finance",`+"\n      "+`"ROLE": "lead",`), 1)
	_, err = ParseSignatures(bad)
	var pe *ParseError
	if !errors.As(err, &pe) || pe.Line != 6 || pe.Column != 7 || pe.Msg != `key "ROLE" differs from key "role" only in letter case; keys are exact and each field is given once` {
		t.Fatalf("got %v (%#v)", err, pe)
	}
}
