package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"

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
	Format   string   `json:"format"`
	Tool     string   `json:"tool"`
	Version  string   `json:"version"`
	Seed     uint64   `json:"seed"`
	KPI      string   `json:"kpi"`
	AsOf     string   `json:"as_of"` // last week of the data
	Channels []string `json:"channels"`
	Horizon  int      `json:"horizon_weeks"`
	// Support is each channel's observed range of 4-week average weekly
	// spend, in Channels order: the sign-off rule cut_below_support reads it,
	// so verify can derive the required sign-offs from the record.
	Support      []gate.SupportRange `json:"support"`
	Inputs       map[string]Input    `json:"inputs"`
	PolicySHA256 string              `json:"policy_sha256"`
	Draws        DrawsInfo           `json:"draws"`
	Evidence     map[string]int      `json:"evidence_summary"`
	Proposal     Proposal            `json:"proposal"`
	// Effectiveness is which effectiveness specification the decision's
	// model used and why; absent when the choice was not run and every
	// channel is constant.
	Effectiveness *EffectChoice `json:"effectiveness,omitempty"`
	gate.Decision
	// Forecast is what the decision expects over the horizon under the
	// approved plan, in the form next quarter's reconciliation reads.
	Forecast validation.Forecast `json:"forecast"`
	// ForecastTotal is the 5th, 50th and 95th percentile of the KPI summed
	// over the horizon.
	ForecastTotal [3]float64 `json:"forecast_total"`
	Caution       string     `json:"caution"`
}

// EffectChoice records the effectiveness specification a decision used:
// Model is constant, drifting or seasonal, Channels the channels whose
// effectiveness varies, Evidence how it was chosen, Preferred what the
// evidence preferred (it differs from Model when draws were given), and
// Changes each named channel's change with its interval.
type EffectChoice struct {
	Model         string         `json:"model"`
	Channels      []string       `json:"channels,omitempty"`
	Evidence      string         `json:"evidence"`
	Preferred     string         `json:"preferred,omitempty"`
	BacktestRatio float64        `json:"backtest_ratio,omitempty"`
	Changes       []EffectChange `json:"changes,omitempty"`
	Note          string         `json:"note,omitempty"`
}

// EffectChange is one channel's change of effectiveness under one varying
// specification (Kind: drifting — the last week over the history average;
// seasonal — the next weeks over the yearly average), with its 90%
// bootstrap interval and the test's z.
type EffectChange struct {
	Kind    string  `json:"kind,omitempty"`
	Channel string  `json:"channel"`
	Change  float64 `json:"change"`
	Low     float64 `json:"low"`
	High    float64 `json:"high"`
	Z       float64 `json:"z"`
	Named   bool    `json:"named"`
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

// ParseDecision reads a record strictly: unknown fields, a key given twice
// or in two letter cases, a wrong format, and bytes other than those
// MarshalDecision writes for the content are refused, naming the file and
// the line and column.
func ParseDecision(data []byte, source string) (*Decision, error) {
	if err := checkKeys(data, source); err != nil {
		return nil, err
	}
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
	if err := checkCanonical(data, &d, source); err != nil {
		return nil, err
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
