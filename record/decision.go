package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"slices"

	"sluice/gate"
	"sluice/policies"
	"sluice/validation"
)

// DecisionFormat names the version of the decision record layout.
const DecisionFormat = "sluice.decision.v1"

// Caution is written into every record and brief.
const Caution = "Every figure here is an estimate from a statistical model fitted to past data. " +
	"It is decision support, not a guarantee: the company's financial controls and its accountable owners decide."

// Input is one input file of a decision, by content.
type Input struct {
	Path   string `json:"path"`
	SHA256 string `json:"sha256"`
}

// Proposal is the allocator's side of the decision.
type Proposal struct {
	Source       string  `json:"source"`    // "allocator" or the file a person wrote
	Objective    string  `json:"objective"` // the allocator's objective
	ExpectedGain float64 `json:"expected_gain"`
	Optimality   string  `json:"optimality,omitempty"` // the allocator's optimality check in words
}

// DrawsInfo summarizes the draws the decision was judged on.
type DrawsInfo struct {
	Count       int     `json:"count"`
	Failed      int     `json:"failed"`
	Method      string  `json:"method"`
	BlockLength float64 `json:"block_length"`
}

// Decision is the decision record, decision.json. Its exact bytes are what
// sign-offs sign; MarshalDecision is deterministic.
type Decision struct {
	Format       string           `json:"format"`
	Tool         string           `json:"tool"`
	Version      string           `json:"version"`
	Seed         uint64           `json:"seed"`
	KPI          string           `json:"kpi"`
	AsOf         string           `json:"as_of"` // last week of the data
	Channels     []string         `json:"channels"`
	Horizon      int              `json:"horizon_weeks"`
	Inputs       map[string]Input `json:"inputs"`
	PolicySHA256 string           `json:"policy_sha256"`
	Draws        DrawsInfo        `json:"draws"`
	Evidence     map[string]int   `json:"evidence_summary"`
	Proposal     Proposal         `json:"proposal"`
	gate.Decision
	// Forecast is what the decision expects over the horizon under the
	// approved plan, in the form next quarter's reconciliation reads.
	Forecast validation.Forecast `json:"forecast"`
	// ForecastTotal is the 5th, 50th and 95th percentile of the KPI summed
	// over the horizon.
	ForecastTotal [3]float64 `json:"forecast_total"`
	Caution       string     `json:"caution"`
}

// MarshalDecision returns the record's bytes: indented JSON with a final
// newline.
func MarshalDecision(d *Decision) ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(d); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// ParseDecision reads a record strictly: unknown fields and a wrong format
// are refused, naming the file.
func ParseDecision(data []byte, source string) (*Decision, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var d Decision
	if err := dec.Decode(&d); err != nil {
		return nil, jsonErrorIn(source, data, err)
	}
	if dec.More() {
		return nil, fmt.Errorf("%s: data after the record", source)
	}
	if d.Format != DecisionFormat {
		return nil, fmt.Errorf("%s: format %q is not %q", source, d.Format, DecisionFormat)
	}
	return &d, nil
}

func jsonErrorIn(source string, data []byte, err error) error {
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		l, c := position(data, se.Offset)
		return fmt.Errorf("%s:%d:%d: %v", source, l, c, err)
	case errors.As(err, &te):
		l, c := position(data, te.Offset)
		return fmt.Errorf("%s:%d:%d: field %s: %v", source, l, c, te.Field, err)
	}
	return fmt.Errorf("%s: %v", source, err)
}

// SHA256Hex is the hex SHA-256 of b.
func SHA256Hex(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// PolicyKeyring builds role → public keys from a policy's roles.
func PolicyKeyring(p *policies.Policy) (Keyring, error) {
	ring := Keyring{}
	for role := range p.Roles {
		pems, err := p.KeyPEM(role)
		if err != nil {
			return nil, err
		}
		ring[role] = []ed25519.PublicKey{} // a role without keys is still a role
		for i, b := range pems {
			pub, err := ParsePublicKeyPEM(b)
			if err != nil {
				return nil, fmt.Errorf("%s: roles.%s.keys[%d]: %v", p.Source, role, i, err)
			}
			ring[role] = append(ring[role], pub)
		}
	}
	return ring, nil
}

// VerifyDecision checks a decision record against its sign-offs and the
// policy, and returns every problem, one line each; none means verified.
// It checks that the record parses, that the policy is the one the record
// was made with, that every signature is valid for a key the policy lists
// for the claimed role over the record's exact bytes, that every required
// role signed, that every waiver was signed by a role the policy lets waive
// that check, that the data (when dataSHA256 is not "") is the data the
// record was made from, and that the verdict approves something.
func VerifyDecision(recordBytes []byte, source string, signoffs []Signoff, p *policies.Policy, dataSHA256 string) []string {
	d, err := ParseDecision(recordBytes, source)
	if err != nil {
		return []string{err.Error()}
	}
	var problems []string
	if got := SHA256Hex(p.Raw); got != d.PolicySHA256 {
		problems = append(problems, fmt.Sprintf("policy %s has sha256 %s, but the record was made with policy %s: the policy changed after the decision",
			p.Source, short(got), short(d.PolicySHA256)))
	}
	if dataSHA256 != "" {
		if in, ok := d.Inputs["data"]; !ok || in.SHA256 != dataSHA256 {
			problems = append(problems, fmt.Sprintf("data has sha256 %s, but the record was made from %s (%s)",
				short(dataSHA256), in.Path, short(in.SHA256)))
		}
	}
	ring, err := PolicyKeyring(p)
	if err != nil {
		return append(problems, err.Error())
	}
	problems = append(problems, Problems(recordBytes, signoffs, ring)...)
	roles, waivers := SignedRoles(recordBytes, signoffs, ring)
	for _, req := range d.SignoffsRequired {
		if !slices.Contains(roles, req.Role) {
			problems = append(problems, fmt.Sprintf("missing sign-off: %s (rule %s: %s)", req.Role, req.Rule, req.Explanation))
		}
	}
	for _, w := range waivers {
		c, ok := findCheck(d, w.Waiver.Check)
		if !ok {
			problems = append(problems, fmt.Sprintf("waiver of %q by %s: the record has no such check", w.Waiver.Check, w.Role))
			continue
		}
		if !p.Evidence.MayWaive(w.Role, c) {
			problems = append(problems, fmt.Sprintf("waiver of %q by %s: the policy does not let %s waive it", w.Waiver.Check, w.Role, w.Role))
		}
	}
	if d.Verdict == gate.Refuse {
		problems = append(problems, "the decision is refuse: a refused decision cannot be verified as approved")
	}
	return problems
}

func findCheck(d *Decision, name string) (validation.Check, bool) {
	for _, c := range d.Checks {
		if c.Name == name {
			return c.Check, true
		}
	}
	return validation.Check{}, false
}

func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}
