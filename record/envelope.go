// Package record writes decision records, signs them, and verifies later that
// nothing changed.
//
// A sign-off is an ed25519 signature over the exact bytes of a record file
// (decision.json), carried in a DSSE envelope ("Dead Simple Signing
// Envelope", github.com/secure-systems-lab/dsse, protocol.md and
// envelope.md). Sign-offs are kept beside the record in a signatures file
// (decision.json → decision.signatures.json); every signer appends one.
// See [Signoff] for what exactly a signature covers and why.
//
// Keys are stored in the open formats of the Go standard library: private
// keys as PKCS#8 PEM ("PRIVATE KEY"), public keys as PKIX PEM ("PUBLIC KEY").
package record

import (
	"crypto/ed25519"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"strconv"
)

// PayloadType is the DSSE payload type of a decision record: the media type
// of decision.json. A sign-off's envelope carries it with parameters that
// bind the signer's role and waivers (see [SignedPayloadType]).
const PayloadType = "application/vnd.sluice.decision+json"

// PAE returns the DSSE v1 pre-authentication encoding of a payload type and
// a payload, which is what a DSSE signature covers:
//
//	PAE(type, body) = "DSSEv1" SP LEN(type) SP type SP LEN(body) SP body
//
// with SP an ASCII space and LEN the ASCII decimal byte length, no leading
// zeros (DSSE protocol.md, "Signature Definition"). The lengths make the
// encoding unambiguous, so no payload can pass for another type's.
func PAE(payloadType string, payload []byte) []byte {
	b := make([]byte, 0, len("DSSEv1")+len(payloadType)+len(payload)+24)
	b = append(b, "DSSEv1 "...)
	b = strconv.AppendInt(b, int64(len(payloadType)), 10)
	b = append(b, ' ')
	b = append(b, payloadType...)
	b = append(b, ' ')
	b = strconv.AppendInt(b, int64(len(payload)), 10)
	b = append(b, ' ')
	return append(b, payload...)
}

// Envelope is a DSSE JSON envelope (DSSE envelope.md):
//
//	{"payload": base64(body), "payloadType": type,
//	 "signatures": [{"keyid": id, "sig": base64(Sign(PAE(type, body)))}]}
//
// Its JSON form encodes with standard base64 and decodes either the standard
// or the URL-safe alphabet, padded or not, as DSSE requires of verifiers.
type Envelope struct {
	Payload     []byte
	PayloadType string
	Signatures  []Signature
}

// Signature is one signature of an envelope. KeyID is DSSE's unauthenticated
// hint: it narrows which key to try and names the signer in messages, but no
// decision rests on it.
type Signature struct {
	KeyID string
	Sig   []byte
}

// SignEnvelope returns an envelope holding payload and one ed25519
// signature by key over PAE(payloadType, payload). The envelope keeps its
// own copy of payload.
func SignEnvelope(payloadType string, payload []byte, key ed25519.PrivateKey) (Envelope, error) {
	if len(key) != ed25519.PrivateKeySize {
		return Envelope{}, fmt.Errorf("record: private key has %d bytes, want %d", len(key), ed25519.PrivateKeySize)
	}
	pub := key.Public().(ed25519.PublicKey)
	return Envelope{
		Payload:     append([]byte{}, payload...), // never nil, even for an empty record
		PayloadType: payloadType,
		Signatures: []Signature{{
			KeyID: KeyID(pub),
			Sig:   ed25519.Sign(key, PAE(payloadType, payload)),
		}},
	}, nil
}

// Verify reports whether at least one of the envelope's signatures verifies
// with pub over PAE(PayloadType, Payload). It does not judge the payload
// type; the caller decides which types it accepts.
func (e Envelope) Verify(pub ed25519.PublicKey) bool {
	if len(pub) != ed25519.PublicKeySize {
		return false
	}
	m := PAE(e.PayloadType, e.Payload)
	for _, s := range e.Signatures {
		if ed25519.Verify(pub, m, s.Sig) {
			return true
		}
	}
	return false
}

// envelopeJSON and signatureJSON are the wire form, in the field order of
// DSSE envelope.md.
type envelopeJSON struct {
	Payload     string          `json:"payload"`
	PayloadType string          `json:"payloadType"`
	Signatures  []signatureJSON `json:"signatures"`
}

type signatureJSON struct {
	KeyID string `json:"keyid,omitempty"`
	Sig   string `json:"sig"`
}

func (e Envelope) wire() envelopeJSON {
	w := envelopeJSON{
		Payload:     base64.StdEncoding.EncodeToString(e.Payload),
		PayloadType: e.PayloadType,
		Signatures:  make([]signatureJSON, len(e.Signatures)),
	}
	for i, s := range e.Signatures {
		w.Signatures[i] = signatureJSON{KeyID: s.KeyID, Sig: base64.StdEncoding.EncodeToString(s.Sig)}
	}
	return w
}

// decode converts the wire form; path prefixes the field names in errors.
func (w envelopeJSON) decode(path string) (Envelope, error) {
	payload, err := decodeBase64(w.Payload)
	if err != nil {
		return Envelope{}, &ParseError{Field: path + "payload", Msg: err.Error()}
	}
	e := Envelope{Payload: payload, PayloadType: w.PayloadType}
	if w.Signatures != nil {
		e.Signatures = make([]Signature, len(w.Signatures))
	}
	for i, s := range w.Signatures {
		sig, err := decodeBase64(s.Sig)
		if err != nil {
			return Envelope{}, &ParseError{Field: fmt.Sprintf("%ssignatures[%d].sig", path, i), Msg: err.Error()}
		}
		e.Signatures[i] = Signature{KeyID: s.KeyID, Sig: sig}
	}
	return e, nil
}

// MarshalJSON writes the DSSE JSON envelope, base64 in the standard alphabet.
func (e Envelope) MarshalJSON() ([]byte, error) {
	return json.Marshal(e.wire())
}

// UnmarshalJSON reads a DSSE JSON envelope. Errors name the JSON field.
func (e *Envelope) UnmarshalJSON(data []byte) error {
	var w envelopeJSON
	if err := json.Unmarshal(data, &w); err != nil {
		return fmt.Errorf("record: envelope: %w", err)
	}
	v, err := w.decode("")
	if err != nil {
		return fmt.Errorf("record: envelope: %w", err)
	}
	*e = v
	return nil
}

// decodeBase64 accepts the standard and the URL-safe alphabet (DSSE
// protocol.md: "verifiers MUST accept either"), with or without padding.
// The message never repeats the input.
func decodeBase64(s string) ([]byte, error) {
	enc := base64.StdEncoding
	for i := 0; i < len(s); i++ {
		if s[i] == '-' || s[i] == '_' {
			enc = base64.URLEncoding
			break
		}
	}
	if len(s)%4 != 0 {
		enc = enc.WithPadding(base64.NoPadding)
	}
	b, err := enc.DecodeString(s)
	if err != nil {
		return nil, fmt.Errorf("not base64 (%v)", err)
	}
	return b, nil
}
