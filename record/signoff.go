package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"mime"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"
	"unicode/utf8"

	"sluice/internal/atomicfile"
)

// Waiver is a signer's explicit acceptance of a check that did not pass.
// Whether a role may waive a check is the policy's business, not this
// package's; a waiver here is only what the signer signed.
type Waiver struct {
	Check  string `json:"check"`  // name of the evidence check
	Reason string `json:"reason"` // why the signer accepts it
}

// Signoff is one signer's approval of a record in a role.
//
// What is signed. The envelope's payload is the record file's exact bytes,
// unchanged, so "an ed25519 signature over the exact bytes of decision.json"
// is literally true: any DSSE verifier, or base64 -d, shows the signed bytes
// are the file. What the signer vouches for beyond the bytes (the role they
// sign in, the checks they waive, and optionally when) is bound through the
// payload type, which DSSE authenticates because PAE covers it:
//
//	application/vnd.sluice.decision+json; role=finance; signed-at="2026-03-31T09:00:00Z"; waivers-sha256=<hex>
//
// The parameters follow media-type parameter syntax (see
// [SignedPayloadType]). Moving a signature to another role, or adding,
// dropping or editing a waiver, changes the type the signature was made
// over, and verification fails.
//
// The alternative, a signed statement holding the record's SHA-256 with the
// role and waivers (in-toto style), binds the same facts, but the signature
// is then over a digest in a second format and the record's bytes are only
// reached through a re-hash. Keeping the bytes as the payload costs a base64
// copy of the record per sign-off; in return a verifier can show what was
// signed when a record was edited.
type Signoff struct {
	Role     string
	KeyID    string    // of the signer's public key, see [KeyID]
	SignedAt time.Time // UTC, whole seconds; zero when not recorded
	Waivers  []Waiver  // nil when none
	Envelope Envelope  // exactly one signature
}

// SignaturesFormat is the format tag of a signatures file.
const SignaturesFormat = "sluice.signatures.v1"

// Errors of [VerifySignoff]; the errors returned wrap them with detail.
var (
	ErrRecordChanged  = errors.New("the record's bytes differ from the bytes that were signed")
	ErrBindingChanged = errors.New("the sign-off's role, waivers or time differ from those that were signed")
	ErrBadSignature   = errors.New("the signature does not verify")
)

// SignedPayloadType returns the DSSE payload type a sign-off is signed over:
// [PayloadType] with the parameters role, signed-at (RFC 3339 UTC, quoted
// because it holds colons; left out when signedAt is zero) and
// waivers-sha256 (left out when there are none), in that order. The waiver
// digest is the hex SHA-256 of the waivers as a compact JSON array of
// {"check","reason"} objects in the order given, UTF-8, written by
// encoding/json without HTML escaping. role must be a valid role name (see
// [Sign]); it needs no quoting.
func SignedPayloadType(role string, waivers []Waiver, signedAt time.Time) string {
	return signedPayloadType(PayloadType, role, waivers, signedAt)
}

// WithdrawalType is the DSSE payload type of a withdrawal: a signer's
// signed statement, over the same record bytes, that their sign-off in a
// role no longer stands. It carries the role and the time like a sign-off.
const WithdrawalType = "application/vnd.sluice.withdrawal+json"

func signedPayloadType(base, role string, waivers []Waiver, signedAt time.Time) string {
	var b strings.Builder
	b.WriteString(base)
	b.WriteString("; role=")
	b.WriteString(role)
	if !signedAt.IsZero() {
		b.WriteString(`; signed-at="`)
		b.WriteString(formatTime(signedAt))
		b.WriteString(`"`)
	}
	if len(waivers) > 0 {
		b.WriteString("; waivers-sha256=")
		b.WriteString(waiversDigest(waivers))
	}
	return b.String()
}

func waiversDigest(ws []Waiver) string {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(ws); err != nil {
		panic("record: " + err.Error()) // strings always encode
	}
	sum := sha256.Sum256(bytes.TrimSuffix(buf.Bytes(), []byte("\n")))
	return hex.EncodeToString(sum[:])
}

const timeLayout = "2006-01-02T15:04:05Z"

func formatTime(t time.Time) string { return t.UTC().Format(timeLayout) }

// Sign signs the exact bytes of a record in a role, with optional waivers,
// recording no signing time (so the same inputs give the same bytes).
// role is 1 to 64 ASCII letters, digits, '.', '_' or '-', starting with a
// letter or digit. Each waiver needs a check name and a reason, and a check
// may be waived once.
func Sign(record []byte, key ed25519.PrivateKey, role string, waivers []Waiver) (Signoff, error) {
	return SignAt(record, key, role, waivers, time.Time{})
}

// SignAt is [Sign] recording the signing time at, which the caller passes so
// that the result stays reproducible. It is kept in UTC, to the second, and
// is signed like the role and waivers. A zero at records no time.
func SignAt(record []byte, key ed25519.PrivateKey, role string, waivers []Waiver, at time.Time) (Signoff, error) {
	if !at.IsZero() {
		if y := at.UTC().Year(); y < 1 || y > 9999 {
			return Signoff{}, fmt.Errorf("record: signing time %d is out of range", y)
		}
		at = time.Unix(at.Unix(), 0).UTC()
	}
	if len(waivers) == 0 {
		waivers = nil
	}
	s := Signoff{Role: role, SignedAt: at, Waivers: slices.Clone(waivers)}
	if err := checkRole(role); err != nil {
		return Signoff{}, fmt.Errorf("record: role: %w", err)
	}
	if err := checkWaivers(s.Waivers, "waivers"); err != nil {
		return Signoff{}, fmt.Errorf("record: %w", err)
	}
	env, err := SignEnvelope(SignedPayloadType(role, s.Waivers, at), record, key)
	if err != nil {
		return Signoff{}, err
	}
	s.KeyID = env.Signatures[0].KeyID
	s.Envelope = env
	return s, nil
}

// VerifySignoff checks that s is a signature by pub over exactly record, in
// the role, with the waivers and the time that s states. The error wraps
// [ErrRecordChanged], [ErrBindingChanged] or [ErrBadSignature] where one
// applies. Whether pub may sign in s.Role is the caller's question; see
// [Problems] for the check against a policy's keys.
func VerifySignoff(record []byte, s Signoff, pub ed25519.PublicKey) error {
	if len(pub) != ed25519.PublicKeySize {
		return fmt.Errorf("record: public key has %d bytes, want %d", len(pub), ed25519.PublicKeySize)
	}
	if err := checkContent(record, s); err != nil {
		return fmt.Errorf("record: %w", err)
	}
	sig := s.Envelope.Signatures[0]
	if !ed25519.Verify(pub, PAE(s.Envelope.PayloadType, s.Envelope.Payload), sig.Sig) {
		return fmt.Errorf("record: %w with key %s", ErrBadSignature, KeyID(pub))
	}
	if id := KeyID(pub); s.KeyID != id || sig.KeyID != id {
		return fmt.Errorf("record: the sign-off names key %s, but the signature is by key %s", s.KeyID, id)
	}
	return nil
}

// checkContent checks everything about s but the signature: one signature,
// the payload equal to record, and the payload type equal to the one the
// role, waivers and time give.
func checkContent(record []byte, s Signoff) error {
	return checkContentOf(PayloadType, record, s)
}

func checkContentOf(base string, record []byte, s Signoff) error {
	if n := len(s.Envelope.Signatures); n != 1 {
		return fmt.Errorf("the sign-off's envelope holds %d signatures, want 1", n)
	}
	if !bytes.Equal(s.Envelope.Payload, record) {
		return fmt.Errorf("%w (signed sha256 %s, now %s)", ErrRecordChanged, shortSum(s.Envelope.Payload), shortSum(record))
	}
	got := s.Envelope.PayloadType
	if got == signedPayloadType(base, s.Role, s.Waivers, s.SignedAt) {
		return nil
	}
	mt, params, err := mime.ParseMediaType(got)
	switch {
	case err != nil || mt != base:
		return fmt.Errorf("%w: the envelope's payload type %q is not a sluice decision sign-off", ErrBindingChanged, got)
	case params["role"] != s.Role:
		return fmt.Errorf("%w: signed for role %q, but the sign-off claims role %q", ErrBindingChanged, params["role"], s.Role)
	case params["signed-at"] != timeOrEmpty(s.SignedAt):
		return fmt.Errorf("%w: signed with time %q, but the sign-off states %q", ErrBindingChanged, params["signed-at"], timeOrEmpty(s.SignedAt))
	case params["waivers-sha256"] != digestOrEmpty(s.Waivers):
		return fmt.Errorf("%w: the waivers differ from those that were signed", ErrBindingChanged)
	}
	return fmt.Errorf("%w: payload type %q, want %q", ErrBindingChanged, got, signedPayloadType(base, s.Role, s.Waivers, s.SignedAt))
}

func timeOrEmpty(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return formatTime(t)
}

func digestOrEmpty(ws []Waiver) string {
	if len(ws) == 0 {
		return ""
	}
	return waiversDigest(ws)
}

func shortSum(b []byte) string {
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:8])
}

// Keyring maps each role of a policy to the public keys listed for it.
type Keyring map[string][]ed25519.PublicKey

// RoleWaiver is a waiver from a valid sign-off, with who signed it.
type RoleWaiver struct {
	Role   string
	KeyID  string
	Waiver Waiver
}

// Problems checks every sign-off against record and keys and returns one
// line per sign-off that does not hold: the record changed after signing,
// role or waivers changed after signing, a bad signature, a signer whose
// key the policy lists only for other roles or not at all, a role the
// policy does not know, or a repeated sign-off. It returns nil when all
// hold. Which roles are required, and who may waive what, is the caller's
// question (see [SignedRoles]).
func Problems(record []byte, signoffs []Signoff, keys Keyring) []string {
	var out []string
	for _, o := range evaluate(record, signoffs, keys) {
		if o.problem != "" {
			out = append(out, o.problem)
		}
	}
	return out
}

// SignedRoles returns the roles, sorted, that hold at least one sign-off
// without problems, and the waivers of those sign-offs in file order.
func SignedRoles(record []byte, signoffs []Signoff, keys Keyring) (roles []string, waivers []RoleWaiver) {
	for i, o := range evaluate(record, signoffs, keys) {
		if o.problem != "" {
			continue
		}
		s := signoffs[i]
		if !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
		for _, w := range s.Waivers {
			waivers = append(waivers, RoleWaiver{Role: s.Role, KeyID: s.KeyID, Waiver: w})
		}
	}
	slices.Sort(roles)
	return roles, waivers
}

type outcome struct{ problem string }

func evaluate(record []byte, signoffs []Signoff, keys Keyring) []outcome {
	return evaluateOf(PayloadType, record, signoffs, keys)
}

func evaluateOf(base string, record []byte, signoffs []Signoff, keys Keyring) []outcome {
	roles := make([]string, 0, len(keys))
	for r := range keys {
		roles = append(roles, r)
	}
	slices.Sort(roles)
	type roleKey struct{ role, id string }
	seen := make(map[roleKey]int)
	out := make([]outcome, len(signoffs))
	for i, s := range signoffs {
		fail := func(format string, args ...any) {
			out[i].problem = fmt.Sprintf("sign-off %d (role %q, key %s): ", i+1, s.Role, s.KeyID) + fmt.Sprintf(format, args...)
		}
		listed, ok := keys[s.Role]
		if !ok {
			fail("the policy has no role %q", s.Role)
			continue
		}
		if err := checkContentOf(base, record, s); err != nil {
			fail("%v", err)
			continue
		}
		m := PAE(s.Envelope.PayloadType, s.Envelope.Payload)
		sig := s.Envelope.Signatures[0]
		by := verifyingKey(listed, m, sig.Sig)
		if by == nil {
			var others []string
			var other ed25519.PublicKey
			for _, r := range roles {
				if r == s.Role {
					continue
				}
				if k := verifyingKey(keys[r], m, sig.Sig); k != nil {
					others, other = append(others, fmt.Sprintf("%q", r)), k
				}
			}
			switch {
			case others != nil:
				fail("signed by key %s, which the policy lists for %s, not for %q", KeyID(other), strings.Join(others, ", "), s.Role)
			case listsKeyID(listed, sig.KeyID):
				fail("the signature does not verify with key %s listed for %q (signature or sign-off altered)", sig.KeyID, s.Role)
			default:
				fail("no key listed for %q, nor for any role, made this signature; the policy does not list key %s", s.Role, sig.KeyID)
			}
			continue
		}
		id := KeyID(by)
		if s.KeyID != id || sig.KeyID != id {
			fail("names key %s, but the signature is by key %s", s.KeyID, id)
			continue
		}
		rk := roleKey{s.Role, id}
		if j, dup := seen[rk]; dup && base == PayloadType { // one may withdraw, sign again and withdraw again
			fail("repeats sign-off %d (same role, same key)", j+1)
			continue
		}
		seen[rk] = i
	}
	return out
}

func verifyingKey(keys []ed25519.PublicKey, message, sig []byte) ed25519.PublicKey {
	for _, k := range keys {
		if len(k) == ed25519.PublicKeySize && ed25519.Verify(k, message, sig) {
			return k
		}
	}
	return nil
}

func listsKeyID(keys []ed25519.PublicKey, id string) bool {
	for _, k := range keys {
		if len(k) == ed25519.PublicKeySize && KeyID(k) == id {
			return true
		}
	}
	return false
}

// SignaturesPath returns the signatures file kept beside a record: the
// record's name with its extension replaced by ".signatures.json"
// (decision.json → decision.signatures.json).
func SignaturesPath(recordPath string) string {
	return strings.TrimSuffix(recordPath, filepath.Ext(recordPath)) + ".signatures.json"
}

// AppendSignoff adds s to the signatures file beside the record at
// recordPath, creating the file if needed, and rewrites it atomically. It
// refuses a sign-off made over other bytes than the record file now holds,
// one whose role, waivers or time do not match its envelope, and a second
// sign-off by the same key in the same role. Two signers appending at the
// same moment can lose one sign-off (last rename wins); sign one at a time.
func AppendSignoff(recordPath string, s Signoff) error {
	rec, err := os.ReadFile(recordPath)
	if err != nil {
		return fmt.Errorf("record: %w", err)
	}
	if err := validateSignoff(s, ""); err != nil {
		return fmt.Errorf("record: refusing to append an invalid sign-off: %w", err)
	}
	if err := checkContent(rec, s); err != nil {
		if errors.Is(err, ErrRecordChanged) {
			return fmt.Errorf("record: refusing to append: the sign-off was made over other bytes than %s holds; sign it again", recordPath)
		}
		return fmt.Errorf("record: refusing to append: %w", err)
	}
	path := SignaturesPath(recordPath)
	file, err := ReadSignatures(path)
	if errors.Is(err, fs.ErrNotExist) {
		file, err = &Signatures{}, nil
	}
	if err != nil {
		return err
	}
	for j, e := range file.Signoffs {
		if e.Role == s.Role && e.KeyID == s.KeyID {
			return fmt.Errorf("record: refusing to append: %s already holds sign-off %d for role %q by key %s", path, j+1, s.Role, s.KeyID)
		}
	}
	file.Signoffs = append(file.Signoffs, s)
	data, err := MarshalSignatures(file)
	if err != nil {
		return err
	}
	return atomicfile.Write(path, data, 0o644)
}

// Withdraw signs a withdrawal of the signer's sign-off in role over the
// record's exact bytes, at time at (required: a withdrawal says when).
func Withdraw(record []byte, key ed25519.PrivateKey, role string, at time.Time) (Signoff, error) {
	if at.IsZero() {
		return Signoff{}, errors.New("record: a withdrawal needs its time")
	}
	if err := checkRole(role); err != nil {
		return Signoff{}, fmt.Errorf("record: role: %w", err)
	}
	at = time.Unix(at.Unix(), 0).UTC()
	env, err := SignEnvelope(signedPayloadType(WithdrawalType, role, nil, at), record, key)
	if err != nil {
		return Signoff{}, err
	}
	return Signoff{Role: role, KeyID: env.Signatures[0].KeyID, SignedAt: at, Envelope: env}, nil
}

// WithdrawSignoff removes from the signatures file beside recordPath the
// sign-off that w's signer made in w's role and records w in its place, so
// the withdrawal is kept and shown, never silent. It refuses a withdrawal
// whose signature does not verify with the key of the sign-off it
// withdraws (only the signer can withdraw: pub is the signer's public
// key, and both the withdrawal and the withdrawn sign-off must verify with
// it), or when there is no such sign-off.
func WithdrawSignoff(recordPath string, w Signoff, pub ed25519.PublicKey) error {
	rec, err := os.ReadFile(recordPath)
	if err != nil {
		return fmt.Errorf("record: %w", err)
	}
	if err := checkContentOf(WithdrawalType, rec, w); err != nil {
		return fmt.Errorf("record: refusing the withdrawal: %w", err)
	}
	path := SignaturesPath(recordPath)
	file, err := ReadSignatures(path)
	if err != nil {
		return err
	}
	idx := -1
	for j, e := range file.Signoffs {
		if e.Role == w.Role && e.KeyID == w.KeyID {
			idx = j
		}
	}
	if idx < 0 {
		return fmt.Errorf("record: %s holds no sign-off for role %q by key %s to withdraw", path, w.Role, w.KeyID)
	}
	if len(pub) != ed25519.PublicKeySize || !ed25519.Verify(pub, PAE(w.Envelope.PayloadType, w.Envelope.Payload), w.Envelope.Signatures[0].Sig) {
		return errors.New("record: refusing the withdrawal: its signature does not verify")
	}
	if err := VerifySignoff(rec, file.Signoffs[idx], pub); err != nil {
		return fmt.Errorf("record: refusing the withdrawal: sign-off %d is not by this key (%v)", idx+1, err)
	}
	file.Signoffs = slices.Delete(file.Signoffs, idx, idx+1)
	file.Withdrawals = append(file.Withdrawals, w)
	data, err := MarshalSignatures(file)
	if err != nil {
		return err
	}
	return atomicfile.Write(path, data, 0o644)
}

// ParseError is a problem in a signatures file. Line and Column (1-based
// bytes) are set for JSON syntax and type errors, Field (a path such as
// signoffs[1].envelope.payload) for invalid values.
type ParseError struct {
	File         string // empty when parsing bytes
	Line, Column int    // 0 when not known
	Field        string
	Msg          string
}

func (e *ParseError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		if b.Len() > 0 {
			b.WriteByte(':')
		}
		fmt.Fprintf(&b, "%d:%d", e.Line, e.Column)
	}
	if b.Len() > 0 {
		b.WriteString(": ")
	}
	if e.Field != "" {
		b.WriteString(e.Field)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// ReadSignoffs reads a signatures file. A missing file gives an error that
// wraps fs.ErrNotExist; other errors are a *ParseError naming the file and
// the line and column or the JSON field.
func ReadSignoffs(path string) ([]Signoff, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("record: %w", err)
	}
	s, err := ParseSignoffs(data)
	if pe, ok := err.(*ParseError); ok {
		pe.File = path
	}
	return s, err
}

// ParseSignoffs parses the contents of a signatures file and returns its
// sign-offs (see [ParseSignatures] for the withdrawals too).
func ParseSignoffs(data []byte) ([]Signoff, error) {
	f, err := ParseSignatures(data)
	if err != nil {
		return nil, err
	}
	return f.Signoffs, nil
}

// Signatures is a signatures file: the sign-offs that stand, and the
// withdrawals of sign-offs that no longer do.
type Signatures struct {
	Signoffs []Signoff
	// Withdrawals are signed like sign-offs (role and time bound, over the
	// record's bytes), with payload type [WithdrawalType]; no waivers.
	Withdrawals []Signoff
}

// ParseSignatures parses the contents of a signatures file. Unknown fields,
// and a key given twice or in two letter cases, are refused, so a misspelt
// field is not silently dropped and no reader sees another file.
func ParseSignatures(data []byte) (*Signatures, error) {
	if l, c, msg := duplicateKey(data); msg != "" {
		return nil, &ParseError{Line: l, Column: c, Msg: msg}
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var w fileJSON
	if err := dec.Decode(&w); err != nil {
		return nil, jsonError(data, err)
	}
	end := dec.InputOffset()
	if rest := bytes.TrimLeft(data[end:], " \t\r\n"); len(rest) > 0 {
		line, col := position(data, int64(len(data)-len(rest)))
		return nil, &ParseError{Line: line, Column: col, Msg: "unexpected data after the JSON object"}
	}
	if w.Format != SignaturesFormat {
		return nil, &ParseError{Field: "format", Msg: fmt.Sprintf("%q is not %q; not a sluice signatures file", clip(w.Format), SignaturesFormat)}
	}
	if w.Signoffs == nil {
		return nil, &ParseError{Field: "signoffs", Msg: "missing (an empty file has \"signoffs\": [])"}
	}
	out := &Signatures{Signoffs: make([]Signoff, len(w.Signoffs))}
	for i, ws := range w.Signoffs {
		path := fmt.Sprintf("signoffs[%d].", i)
		s, err := ws.decode(path)
		if err == nil {
			err = validateSignoff(s, path)
		}
		if err != nil {
			return nil, err
		}
		out.Signoffs[i] = s
	}
	for i, ws := range w.Withdrawals {
		path := fmt.Sprintf("withdrawals[%d].", i)
		s, err := ws.decode(path)
		if err == nil {
			err = validateSignoff(s, path)
		}
		if err == nil && s.Waivers != nil {
			err = &ParseError{Field: path + "waivers", Msg: "a withdrawal waives nothing"}
		}
		if err == nil && s.SignedAt.IsZero() {
			err = &ParseError{Field: path + "signed_at", Msg: "missing: a withdrawal states when it was made"}
		}
		if err != nil {
			return nil, err
		}
		out.Withdrawals = append(out.Withdrawals, s)
	}
	return out, nil
}

// ReadSignatures reads a signatures file, like [ReadSignoffs].
func ReadSignatures(path string) (*Signatures, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("record: %w", err)
	}
	s, err := ParseSignatures(data)
	if pe, ok := err.(*ParseError); ok {
		pe.File = path
	}
	return s, err
}

// MarshalSignoffs writes a signatures file: indented JSON, fields in a
// fixed order, standard base64, a trailing newline. The same sign-offs
// always give the same bytes, and parsing them gives the sign-offs back.
func MarshalSignoffs(signoffs []Signoff) ([]byte, error) {
	return MarshalSignatures(&Signatures{Signoffs: signoffs})
}

// MarshalSignatures writes a signatures file with its withdrawals.
func MarshalSignatures(f *Signatures) ([]byte, error) {
	w := fileJSON{Format: SignaturesFormat, Signoffs: make([]signoffJSON, len(f.Signoffs))}
	wire := func(s Signoff, path string) (signoffJSON, error) {
		if err := validateSignoff(s, path); err != nil {
			return signoffJSON{}, fmt.Errorf("record: %w", err)
		}
		return signoffJSON{Role: s.Role, KeyID: s.KeyID, SignedAt: timeOrEmpty(s.SignedAt),
			Waivers: s.Waivers, Envelope: s.Envelope.wire()}, nil
	}
	for i, s := range f.Signoffs {
		j, err := wire(s, fmt.Sprintf("signoffs[%d].", i))
		if err != nil {
			return nil, err
		}
		w.Signoffs[i] = j
	}
	for i, s := range f.Withdrawals {
		j, err := wire(s, fmt.Sprintf("withdrawals[%d].", i))
		if err != nil {
			return nil, err
		}
		w.Withdrawals = append(w.Withdrawals, j)
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(w); err != nil {
		return nil, fmt.Errorf("record: %w", err)
	}
	return buf.Bytes(), nil
}

type fileJSON struct {
	Format      string        `json:"format"`
	Signoffs    []signoffJSON `json:"signoffs"`
	Withdrawals []signoffJSON `json:"withdrawals,omitempty"`
}

type signoffJSON struct {
	Role     string       `json:"role"`
	KeyID    string       `json:"keyid"`
	SignedAt string       `json:"signed_at,omitempty"`
	Waivers  []Waiver     `json:"waivers,omitempty"`
	Envelope envelopeJSON `json:"envelope"`
}

func (w signoffJSON) decode(path string) (Signoff, error) {
	s := Signoff{Role: w.Role, KeyID: w.KeyID}
	if len(w.Waivers) > 0 {
		s.Waivers = w.Waivers
	}
	if w.SignedAt != "" {
		t, err := time.Parse(timeLayout, w.SignedAt)
		if err != nil || formatTime(t) != w.SignedAt {
			return Signoff{}, &ParseError{Field: path + "signed_at", Msg: fmt.Sprintf("%q is not a UTC time like 2026-03-31T09:00:00Z", clip(w.SignedAt))}
		}
		s.SignedAt = time.Unix(t.Unix(), 0).UTC()
	}
	env, err := w.Envelope.decode(path + "envelope.")
	if err != nil {
		return Signoff{}, err
	}
	s.Envelope = env
	return s, nil
}

// validateSignoff checks the shape of s, not its signature; path prefixes
// field names.
func validateSignoff(s Signoff, path string) error {
	bad := func(field, format string, args ...any) error {
		return &ParseError{Field: path + field, Msg: fmt.Sprintf(format, args...)}
	}
	if err := checkRole(s.Role); err != nil {
		return bad("role", "%v", err)
	}
	if !isKeyID(s.KeyID) {
		return bad("keyid", "%q is not a key id (%d lowercase hex digits)", clip(s.KeyID), KeyIDLen)
	}
	if !s.SignedAt.IsZero() && (s.SignedAt.Year() < 1 || s.SignedAt.Year() > 9999) {
		return bad("signed_at", "year %d is out of range", s.SignedAt.Year())
	}
	if s.Waivers != nil && len(s.Waivers) == 0 {
		return bad("waivers", "empty list (leave it out)")
	}
	if err := checkWaivers(s.Waivers, path+"waivers"); err != nil {
		return err
	}
	e := s.Envelope
	if e.Payload == nil {
		return bad("envelope.payload", "missing")
	}
	if e.PayloadType == "" {
		return bad("envelope.payloadType", "missing")
	}
	if len(e.Signatures) != 1 {
		return bad("envelope.signatures", "a sign-off holds exactly one signature, found %d", len(e.Signatures))
	}
	if n := len(e.Signatures[0].Sig); n != ed25519.SignatureSize {
		return bad("envelope.signatures[0].sig", "%d bytes, want an ed25519 signature of %d", n, ed25519.SignatureSize)
	}
	return nil
}

func checkRole(role string) error {
	if role == "" {
		return errors.New("missing")
	}
	if len(role) > 64 {
		return fmt.Errorf("%q is longer than 64 characters", clip(role))
	}
	for i := 0; i < len(role); i++ {
		c := role[i]
		alnum := 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9'
		if !alnum && (i == 0 || c != '.' && c != '_' && c != '-') {
			return fmt.Errorf("%q: use ASCII letters, digits, '.', '_' or '-', starting with a letter or digit", clip(role))
		}
	}
	return nil
}

// checkWaivers reports an empty check or reason, text that is not UTF-8,
// or a check waived twice; field names the list.
func checkWaivers(ws []Waiver, field string) error {
	for i, w := range ws {
		at := fmt.Sprintf("%s[%d]", field, i)
		switch {
		case strings.TrimSpace(w.Check) == "":
			return &ParseError{Field: at + ".check", Msg: "missing"}
		case strings.TrimSpace(w.Reason) == "":
			return &ParseError{Field: at + ".reason", Msg: fmt.Sprintf("missing: say why check %q is waived", clip(w.Check))}
		case !utf8.ValidString(w.Check) || !utf8.ValidString(w.Reason):
			return &ParseError{Field: at, Msg: "not valid UTF-8"}
		}
		for j := range i {
			if ws[j].Check == w.Check {
				return &ParseError{Field: at + ".check", Msg: fmt.Sprintf("%q is already waived at %s[%d]", clip(w.Check), field, j)}
			}
		}
	}
	return nil
}

func isKeyID(s string) bool {
	if len(s) != KeyIDLen {
		return false
	}
	for i := 0; i < len(s); i++ {
		if c := s[i]; !('0' <= c && c <= '9' || 'a' <= c && c <= 'f') {
			return false
		}
	}
	return true
}

// clip shortens a value quoted in a message.
func clip(s string) string {
	if len(s) > 60 {
		return s[:60] + "..."
	}
	return s
}

// jsonError turns an encoding/json error into a *ParseError with position.
func jsonError(data []byte, err error) error {
	var syn *json.SyntaxError
	var typ *json.UnmarshalTypeError
	switch {
	case errors.As(err, &syn):
		line, col := position(data, syn.Offset-1)
		return &ParseError{Line: line, Column: col, Msg: strings.TrimPrefix(syn.Error(), "json: ")}
	case errors.As(err, &typ):
		line, col := position(data, typ.Offset-1)
		return &ParseError{Line: line, Column: col, Field: typ.Field, Msg: fmt.Sprintf("JSON %s where %s is wanted", typ.Value, typ.Type)}
	case errors.Is(err, io.EOF):
		return &ParseError{Msg: "empty file"}
	case errors.Is(err, io.ErrUnexpectedEOF):
		line, col := position(data, int64(len(data)))
		return &ParseError{Line: line, Column: col, Msg: "unexpected end of file"}
	}
	return &ParseError{Msg: strings.TrimPrefix(err.Error(), "json: ")}
}

// position converts a byte offset to a 1-based line and column.
func position(data []byte, off int64) (line, col int) {
	off = max(0, min(off, int64(len(data))))
	before := data[:off]
	line = 1 + bytes.Count(before, []byte("\n"))
	col = int(off) - bytes.LastIndexByte(before, '\n')
	return line, col
}
