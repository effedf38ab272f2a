package policies

import (
	"crypto/ed25519"
	"crypto/sha256"
	"crypto/x509"
	"encoding/hex"
	"encoding/pem"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"

	"sluice/internal/boundedio"
	"sluice/internal/strictyaml"
	"sluice/validation"
)

// Version is the only policy file format this package reads.
const Version = 1

// Policy is a written policy, decoded and checked. The package doc lists
// every key with what its absence means.
type Policy struct {
	Version     int             `yaml:"version"`
	Name        string          `yaml:"name"`
	Description string          `yaml:"description"`
	Risk        Risk            `yaml:"risk"`
	Support     Support         `yaml:"support"`
	MinMove     MinMove         `yaml:"min_move"`
	Evidence    EvidenceRules   `yaml:"evidence"`
	Roles       map[string]Role `yaml:"roles"`
	Signoffs    []SignoffRule   `yaml:"signoffs"`
	Signing     SigningRules    `yaml:"signing"`

	// Source names where the policy came from: the file path given to Load
	// or Parse, or "preset:NAME".
	Source string `yaml:"-"`
	// Dir is the directory key file paths are relative to: the policy
	// file's directory after Load, "" (the working directory) otherwise.
	Dir string `yaml:"-"`
	// Raw is the exact bytes the policy was parsed from, for hashing.
	Raw []byte `yaml:"-"`
}

// Risk holds the limits every move's gain distribution must meet. Gains and
// floors are money over the plan's horizon. A nil floor is no floor.
type Risk struct {
	MaxLossProbability float64  `yaml:"max_loss_probability"`
	DownsideLevel      float64  `yaml:"downside_level"`
	DownsideFloor      *float64 `yaml:"downside_floor"`
	DownsideFloorShare *float64 `yaml:"downside_floor_share"`
	CVaRLevel          float64  `yaml:"cvar_level"`
	CVaRFloor          *float64 `yaml:"cvar_floor"`
	CVaRFloorShare     *float64 `yaml:"cvar_floor_share"`
	// DownsideFloorBudget and CVaRFloorBudget are floors as shares of the
	// quarter's media budget (current weekly spend × horizon weeks): the
	// unit a finance partner sets ("at worst, lose half a percent of the
	// quarter's media budget"), which does not shrink with the move as a
	// share of the money moved does.
	DownsideFloorBudget *float64 `yaml:"downside_floor_budget_share"`
	CVaRFloorBudget     *float64 `yaml:"cvar_floor_budget_share"`
	MinExpectedGain     *float64 `yaml:"min_expected_gain"`

	// Budget is the quarter's media budget the budget shares apply to; the
	// gate sets it for each review (not read from the policy file).
	Budget float64 `yaml:"-"`
}

// DownsideFloorFor returns the binding floor for the downside quantile of a
// move that moves moved money over the horizon (the higher of the two floors
// when both are given), and false when the policy sets none.
func (r Risk) DownsideFloorFor(moved float64) (float64, bool) {
	return floorFor(r.DownsideFloor, r.DownsideFloorShare, r.DownsideFloorBudget, moved, r.Budget)
}

// CVaRFloorFor is DownsideFloorFor for the CVaR floor.
func (r Risk) CVaRFloorFor(moved float64) (float64, bool) {
	return floorFor(r.CVaRFloor, r.CVaRFloorShare, r.CVaRFloorBudget, moved, r.Budget)
}

// floorFor is the highest (binding) of the floors given: absolute, as a
// share of the money moved, as a share of the budget.
func floorFor(abs, share, budgetShare *float64, moved, budget float64) (float64, bool) {
	f, ok := math.Inf(-1), false
	if abs != nil {
		f, ok = *abs, true
	}
	if share != nil {
		f, ok = max(f, *share*moved), true
	}
	if budgetShare != nil {
		f, ok = max(f, *budgetShare*budget), true
	}
	return f, ok
}

// Support is the support guard: the band of weekly spend, per channel, that
// the data has seen well enough to trust.
type Support struct {
	HighMultiple float64 `yaml:"high_multiple"` // × highest 4-week average observed
	LowMultiple  float64 `yaml:"low_multiple"`  // × lowest 4-week average observed; 0: no floor
}

// MinMove is the smallest plan worth making; the larger threshold applies.
type MinMove struct {
	PerWeek      float64 `yaml:"per_week"`
	ShareOfSpend float64 `yaml:"share_of_spend"`
}

// Threshold returns the smallest meaningful money moved per week when the
// current plan spends currentTotal per week.
func (m MinMove) Threshold(currentTotal float64) float64 {
	return max(m.PerWeek, m.ShareOfSpend*currentTotal)
}

// Action is what a failed or warning check does to the decision.
type Action string

const (
	Refuse Action = "refuse" // the decision is refused
	Hold   Action = "hold"   // the affected channels do not move (a global check: no channel moves)
	Cap    Action = "cap"    // moves are held inside the exploration band
	Warn   Action = "warn"   // the decision carries the warning, nothing else
)

// EvidenceRules say what each kind of evidence does.
type EvidenceRules struct {
	OnFail          Action  `yaml:"on_fail"`
	OnWarn          Action  `yaml:"on_warn"`
	ExplorationBand float64 `yaml:"exploration_band"`
	// FalseAlarm is the rate at which a family of tested checks fails
	// (and warns) when the fitted model is right; a family's own
	// false_alarm overrides it. Absent: fail 0.05, warn 0.20. See
	// RatesFor.
	FalseAlarm *Rates                           `yaml:"false_alarm"`
	Families   map[validation.Family]ActionRule `yaml:"families"`
	Checks     map[string]ActionRule            `yaml:"checks"`
	Waivers    map[string]WaiverRight           `yaml:"waivers"`
}

// Rates are false-alarm rates: the probability that a family of checks
// fails (warns) on a right model, shared over the family's checks.
type Rates struct {
	Fail float64 `yaml:"fail"`
	Warn float64 `yaml:"warn"`
}

// ActionRule overrides the actions for a family or a named check; an empty
// field inherits. FalseAlarm (families only) overrides the rates.
type ActionRule struct {
	OnFail     Action `yaml:"on_fail"`
	OnWarn     Action `yaml:"on_warn"`
	FalseAlarm *Rates `yaml:"false_alarm"`
	// RawLimit (named checks only) grades the check by this raw limit on
	// its metric instead of its false-alarm rate: {warn, fail}, warn above
	// fail when smaller is worse.
	RawLimit *validation.Limit `yaml:"raw_limit"`
}

// RatesFor returns family f's false-alarm rates under the policy, as
// validation.Grade takes them: the family's own, else the policy's, else
// validation.DefaultRates.
func (e EvidenceRules) RatesFor(f validation.Family) validation.Limit {
	if r := e.Families[f].FalseAlarm; r != nil {
		return validation.Limit{Warn: r.Warn, Fail: r.Fail}
	}
	if r := e.FalseAlarm; r != nil {
		return validation.Limit{Warn: r.Warn, Fail: r.Fail}
	}
	return validation.DefaultRates(f)
}

// WaiverRight lists what a role may waive.
type WaiverRight struct {
	Families []validation.Family `yaml:"families"`
	Checks   []string            `yaml:"checks"`
}

// ActionFor returns what check c does under the policy: "" for a pass, else
// the check's own rule, its family's, or the default, in that order.
func (e EvidenceRules) ActionFor(c validation.Check) Action {
	pick := func(r ActionRule) Action {
		if c.Status == validation.Fail {
			return r.OnFail
		}
		return r.OnWarn
	}
	switch c.Status {
	case validation.Fail, validation.Warn:
	default:
		return ""
	}
	if a := pick(e.Checks[c.Name]); a != "" {
		return a
	}
	if a := pick(e.Families[c.Family]); a != "" {
		return a
	}
	if a := pick(ActionRule{OnFail: e.OnFail, OnWarn: e.OnWarn}); a != "" {
		return a
	}
	if c.Status == validation.Fail {
		return Refuse
	}
	return Warn
}

// MayWaive reports whether role may waive check c, by name or by family.
func (e EvidenceRules) MayWaive(role string, c validation.Check) bool {
	w, ok := e.Waivers[role]
	if !ok {
		return false
	}
	for _, n := range w.Checks {
		if n == c.Name {
			return true
		}
	}
	for _, f := range w.Families {
		if f == c.Family {
			return true
		}
	}
	return false
}

// Role is a group of people who sign, with their public keys.
type Role struct {
	Description string   `yaml:"description"`
	Keys        []string `yaml:"keys"` // PKIX PEM text, or "PATH sha256:FINGERPRINT"
}

// SigningRules are the policy's rules about sign-offs themselves.
type SigningRules struct {
	// AllowUnsigned lets a decision that no sign-off rule requires anyone
	// to sign verify with no signature. Without it a policy with no
	// sign-off rule is refused, and so is a record no rule fires for.
	AllowUnsigned bool `yaml:"allow_unsigned"`
	// AllowSharedSigners lets one key be listed under several roles, so one
	// person can fill several roles. Without it that is refused: separation
	// of duties.
	AllowSharedSigners bool `yaml:"allow_shared_signers"`
	// MaxAgeDays refuses, at verify time, sign-offs made more than this many
	// days earlier; 0: no limit.
	MaxAgeDays int `yaml:"max_age_days"`
}

// FingerprintPrefix starts a key's fingerprint in a policy: the hex SHA-256
// of the key's PKIX DER encoding (the bytes inside a "PUBLIC KEY" PEM
// block), so `openssl pkey -pubin -outform DER | sha256sum` shows it too.
const FingerprintPrefix = "sha256:"

// Fingerprint returns "sha256:" and the hex SHA-256 of PKIX DER bytes.
func Fingerprint(der []byte) string {
	sum := sha256.Sum256(der)
	return FingerprintPrefix + hex.EncodeToString(sum[:])
}

// KeyEntry is one key of a role as the policy pins it: by its PEM text
// (Path "") or by a file path and the fingerprint the file must have.
type KeyEntry struct {
	Fingerprint string // always set: "sha256:" + 64 hex digits
	PEM         []byte // the inline PEM text; nil for a file entry
	Path        string // the key file, relative to Policy.Dir; "" for inline
}

// parseKeyEntry reads one roles.ROLE.keys entry. A path alone is refused:
// the policy's hash covers only its own bytes, so a key named only by path
// could be swapped without changing the policy.
func parseKeyEntry(k string) (KeyEntry, error) {
	if isInlinePEM(k) {
		der, err := pkixDER([]byte(k))
		if err != nil {
			return KeyEntry{}, err
		}
		return KeyEntry{Fingerprint: Fingerprint(der), PEM: []byte(k)}, nil
	}
	i := strings.LastIndex(k, " "+FingerprintPrefix)
	if i < 0 {
		if strings.HasPrefix(k, FingerprintPrefix) {
			return KeyEntry{}, fmt.Errorf("fingerprint %q without the key file: write \"PATH %s...\", e.g. \"keys/alice.pub %s...\"", clipText(k), FingerprintPrefix, FingerprintPrefix)
		}
		return KeyEntry{}, fmt.Errorf("key file %q is not pinned: a path alone is not trust (the file could be replaced without changing this policy); paste the PEM text here, or write \"%s %s<fingerprint>\" (sluice keygen prints the fingerprint)", clipText(k), clipText(k), FingerprintPrefix)
	}
	path, fp := strings.TrimSpace(k[:i]), strings.TrimSpace(k[i+1:])
	hexPart := strings.TrimPrefix(fp, FingerprintPrefix)
	if len(hexPart) != 64 || strings.Trim(hexPart, "0123456789abcdef") != "" {
		return KeyEntry{}, fmt.Errorf("fingerprint %q is not %s and 64 lowercase hex digits", clipText(fp), FingerprintPrefix)
	}
	if path == "" {
		return KeyEntry{}, errors.New("the key file path before the fingerprint is empty")
	}
	return KeyEntry{Fingerprint: fp, Path: path}, nil
}

// pkixDER returns the DER of a single ed25519 "PUBLIC KEY" PEM block.
// Messages never repeat the key text.
func pkixDER(b []byte) ([]byte, error) {
	block, rest := pem.Decode(b)
	if block == nil || block.Type != "PUBLIC KEY" {
		return nil, errors.New(`not a "PUBLIC KEY" PEM block`)
	}
	if len(strings.TrimSpace(string(rest))) > 0 {
		return nil, errors.New("unexpected text after the PUBLIC KEY block (one key per entry)")
	}
	k, err := x509.ParsePKIXPublicKey(block.Bytes)
	if err != nil {
		return nil, errors.New("PUBLIC KEY block is not valid PKIX (SubjectPublicKeyInfo)")
	}
	if _, ok := k.(ed25519.PublicKey); !ok {
		return nil, fmt.Errorf("PUBLIC KEY is %T, want ed25519", k)
	}
	return block.Bytes, nil
}

func clipText(s string) string {
	if len(s) > 60 {
		return s[:60] + "..."
	}
	return s
}

// KeyEntries returns role's keys as pinned by the policy. The policy was
// checked when parsed, so every entry is valid.
func (p *Policy) KeyEntries(role string) []KeyEntry {
	r := p.Roles[role]
	out := make([]KeyEntry, 0, len(r.Keys))
	for _, k := range r.Keys {
		e, err := parseKeyEntry(k)
		if err == nil {
			out = append(out, e)
		}
	}
	return out
}

// KeyPEM returns the PEM bytes of every key of role, reading the entries
// that are file paths (relative to p.Dir) and refusing a file whose key
// does not have the fingerprint the policy pins. It does not parse the PEM
// beyond that.
func (p *Policy) KeyPEM(role string) ([][]byte, error) {
	if _, ok := p.Roles[role]; !ok {
		return nil, fmt.Errorf("policies: %s: no role %q", p.Source, role)
	}
	entries := p.KeyEntries(role)
	out := make([][]byte, 0, len(entries))
	for i, e := range entries {
		if e.Path == "" {
			out = append(out, e.PEM)
			continue
		}
		b, err := boundedio.ReadFile(p.keyPath(e.Path), boundedio.MaxInput)
		if err != nil {
			return nil, fmt.Errorf("policies: %s: roles.%s.keys[%d]: %w", p.Source, role, i, err)
		}
		der, err := pkixDER(b)
		if err != nil {
			return nil, fmt.Errorf("policies: %s: roles.%s.keys[%d]: key file %s: %v", p.Source, role, i, e.Path, err)
		}
		if got := Fingerprint(der); got != e.Fingerprint {
			return nil, fmt.Errorf("policies: %s: roles.%s.keys[%d]: key file %s has fingerprint %s, but the policy pins %s: the key file was replaced",
				p.Source, role, i, e.Path, got, e.Fingerprint)
		}
		out = append(out, b)
	}
	return out, nil
}

func (p *Policy) keyPath(k string) string {
	if filepath.IsAbs(k) || p.Dir == "" {
		return k
	}
	return filepath.Join(p.Dir, k)
}

func isInlinePEM(s string) bool { return strings.Contains(s, "-----BEGIN ") }

// SignoffRule names roles that must sign when its condition holds.
type SignoffRule struct {
	Name    string    `yaml:"name"`
	Explain string    `yaml:"explain"`
	Roles   []string  `yaml:"roles"`
	When    Condition `yaml:"when"`
}

// Condition is one test on the approved plan; exactly one field is set.
// Money is as in the package doc.
type Condition struct {
	Always          bool     `yaml:"always"`
	MovedAbove      *float64 `yaml:"moved_above"`       // money moved over the horizon
	MovedShareAbove *float64 `yaml:"moved_share_above"` // money moved per week / current total weekly spend
	ChangeAbove     *float64 `yaml:"change_above"`      // |approved − current| / current, any channel
	CutBelow        *float64 `yaml:"cut_below"`         // approved weekly spend of a cut channel
	CutBelowSupport bool     `yaml:"cut_below_support"` // a cut channel below its lowest 4-week average
	AnyWaiver       bool     `yaml:"any_waiver"`
	VerdictIn       []string `yaml:"verdict_in"`
}

// Kinds returns the keys of the conditions that are set.
func (c Condition) Kinds() []string {
	var k []string
	add := func(set bool, name string) {
		if set {
			k = append(k, name)
		}
	}
	add(c.Always, "always")
	add(c.MovedAbove != nil, "moved_above")
	add(c.MovedShareAbove != nil, "moved_share_above")
	add(c.ChangeAbove != nil, "change_above")
	add(c.CutBelow != nil, "cut_below")
	add(c.CutBelowSupport, "cut_below_support")
	add(c.AnyWaiver, "any_waiver")
	add(len(c.VerdictIn) > 0, "verdict_in")
	return k
}

// Verdicts are the verdict names a verdict_in condition may use.
var Verdicts = []string{"approve", "downsize", "refuse"}

// Families are the evidence families a policy may name.
var Families = []validation.Family{
	validation.Accuracy, validation.Recovery, validation.Stability,
	validation.Lift, validation.Reconciliation, validation.Identification, validation.EffectFamily,
}

// Load reads, decodes and checks the policy file at path. Key file paths in
// it are taken relative to the file and must exist.
func Load(path string) (*Policy, error) {
	data, err := boundedio.ReadFile(path, boundedio.MaxInput)
	if err != nil {
		return nil, err
	}
	p, err := Parse(data, path)
	if err != nil {
		return nil, err
	}
	p.Dir = filepath.Dir(path)
	for _, role := range sortedKeys(p.Roles) {
		for i, k := range p.KeyEntries(role) {
			if k.Path == "" {
				continue
			}
			if _, err := os.Stat(p.keyPath(k.Path)); err != nil {
				return nil, p.errorAt(data, path, []any{"roles", role, "keys", i},
					fmt.Sprintf("key file %q: %v", k.Path, errorsUnwrapPath(err)))
			}
		}
	}
	return p, nil
}

// errorsUnwrapPath drops the path from an *os.PathError (it is in the message
// already).
func errorsUnwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// Parse decodes and checks a policy from data; source names it in errors.
// Errors are *strictyaml.Error values carrying file, line, column and the key
// path. Besides unknown keys and wrong types it refuses: a version other than
// 1; max_loss_probability outside (0,1); downside_level outside (0,0.5);
// cvar_level outside (0,0.5]; a share floor outside [-1,1]; high_multiple
// below 1; low_multiple outside [0,1]; a negative min_move; an exploration
// band outside [0,1]; an action other than refuse, hold, cap, warn; an unknown
// family; a waiver or sign-off naming an undefined role; a sign-off rule
// without a name, with a name used before, without roles, or whose when has
// not exactly one condition; an unknown verdict; any number not finite; a
// key that is not pinned by content (inline PEM, or a path with its
// sha256 fingerprint) or not an ed25519 PUBLIC KEY; one key under two roles
// unless signing.allow_shared_signers; no sign-off rule unless
// signing.allow_unsigned; a negative signing.max_age_days.
func Parse(data []byte, source string) (*Policy, error) {
	var p Policy
	if err := strictyaml.Decode(data, source, &p); err != nil {
		var e *strictyaml.Error
		if errors.As(err, &e) && e.Path == "" && e.Line > 0 {
			if path, col, ok := pathAtLine(data, e.Line); ok {
				e.Path, e.Column = pathString(path), col
			}
		}
		return nil, err
	}
	if prob := p.check(); prob != nil {
		return nil, p.errorAt(data, source, prob.path, prob.msg)
	}
	p.Source = source
	p.Raw = append([]byte(nil), data...)
	if p.Name == "" {
		p.Name = strings.TrimSuffix(filepath.Base(source), filepath.Ext(source))
	}
	return &p, nil
}

type problem struct {
	path []any // string keys and int indices
	msg  string
}

func (p *Policy) errorAt(data []byte, source string, path []any, msg string) error {
	line, col := locate(data, path)
	return &strictyaml.Error{File: source, Line: line, Column: col, Path: pathString(path), Msg: msg}
}

func pathString(path []any) string {
	var b strings.Builder
	for _, s := range path {
		switch s := s.(type) {
		case int:
			fmt.Fprintf(&b, "[%d]", s)
		default:
			if b.Len() > 0 {
				b.WriteByte('.')
			}
			fmt.Fprint(&b, s)
		}
	}
	return b.String()
}

// check returns the first contradiction in p, in the order of the schema.
func (p *Policy) check() *problem {
	var first *problem
	bad := func(msg string, path ...any) {
		if first == nil {
			first = &problem{path, msg}
		}
	}
	finite := func(v float64, path ...any) bool {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			bad("must be a finite number", path...)
			return false
		}
		return true
	}
	optFinite := func(v *float64, path ...any) bool { return v == nil || finite(*v, path...) }

	if p.Version != Version {
		bad(fmt.Sprintf("must be %d (the policy format this version of sluice reads), got %d", Version, p.Version), "version")
	}

	r := p.Risk
	if finite(r.MaxLossProbability, "risk", "max_loss_probability") &&
		!(r.MaxLossProbability > 0 && r.MaxLossProbability < 1) {
		bad(fmt.Sprintf("must be a probability strictly between 0 and 1, got %v", r.MaxLossProbability), "risk", "max_loss_probability")
	}
	if finite(r.DownsideLevel, "risk", "downside_level") && !(r.DownsideLevel > 0 && r.DownsideLevel < 0.5) {
		bad(fmt.Sprintf("must be a lower-tail quantile level strictly between 0 and 0.5 (e.g. 0.05), got %v", r.DownsideLevel), "risk", "downside_level")
	}
	optFinite(r.DownsideFloor, "risk", "downside_floor")
	if optFinite(r.DownsideFloorShare, "risk", "downside_floor_share") && r.DownsideFloorShare != nil &&
		(*r.DownsideFloorShare < -1 || *r.DownsideFloorShare > 1) {
		bad(fmt.Sprintf("must be a share of the money moved in [-1, 1], got %v", *r.DownsideFloorShare), "risk", "downside_floor_share")
	}
	if finite(r.CVaRLevel, "risk", "cvar_level") && !(r.CVaRLevel > 0 && r.CVaRLevel <= 0.5) {
		bad(fmt.Sprintf("must be a tail share in (0, 0.5] (e.g. 0.05), got %v", r.CVaRLevel), "risk", "cvar_level")
	}
	for _, b := range []struct {
		v   *float64
		key string
	}{{r.DownsideFloorBudget, "downside_floor_budget_share"}, {r.CVaRFloorBudget, "cvar_floor_budget_share"}} {
		if optFinite(b.v, "risk", b.key) && b.v != nil && (*b.v < -1 || *b.v > 1) {
			bad(fmt.Sprintf("must be a share of the quarter's media budget in [-1, 1] (-0.005 = lose at most 0.5%%), got %v", *b.v), "risk", b.key)
		}
	}
	optFinite(r.CVaRFloor, "risk", "cvar_floor")
	if optFinite(r.CVaRFloorShare, "risk", "cvar_floor_share") && r.CVaRFloorShare != nil &&
		(*r.CVaRFloorShare < -1 || *r.CVaRFloorShare > 1) {
		bad(fmt.Sprintf("must be a share of the money moved in [-1, 1], got %v", *r.CVaRFloorShare), "risk", "cvar_floor_share")
	}
	optFinite(r.MinExpectedGain, "risk", "min_expected_gain")

	s := p.Support
	if finite(s.HighMultiple, "support", "high_multiple") && !(s.HighMultiple >= 1) {
		bad(fmt.Sprintf("must be at least 1 (a multiple of the highest 4-week average observed), got %v", s.HighMultiple), "support", "high_multiple")
	}
	if finite(s.LowMultiple, "support", "low_multiple") && !(s.LowMultiple >= 0 && s.LowMultiple <= 1) {
		bad(fmt.Sprintf("must be in [0, 1] (a multiple of the lowest 4-week average observed), got %v", s.LowMultiple), "support", "low_multiple")
	}

	if finite(p.MinMove.PerWeek, "min_move", "per_week") && p.MinMove.PerWeek < 0 {
		bad("must not be negative", "min_move", "per_week")
	}
	if finite(p.MinMove.ShareOfSpend, "min_move", "share_of_spend") && !(p.MinMove.ShareOfSpend >= 0 && p.MinMove.ShareOfSpend <= 1) {
		bad(fmt.Sprintf("must be a share in [0, 1], got %v", p.MinMove.ShareOfSpend), "min_move", "share_of_spend")
	}

	e := p.Evidence
	action := func(a Action, path ...any) {
		switch a {
		case "", Refuse, Hold, Cap, Warn:
		default:
			bad(fmt.Sprintf("unknown action %q (known: refuse, hold, cap, warn)", a), path...)
		}
	}
	action(e.OnFail, "evidence", "on_fail")
	action(e.OnWarn, "evidence", "on_warn")
	if finite(e.ExplorationBand, "evidence", "exploration_band") && !(e.ExplorationBand >= 0 && e.ExplorationBand <= 1) {
		bad(fmt.Sprintf("must be a share of current spend in [0, 1] (0.10 = ±10%%), got %v", e.ExplorationBand), "evidence", "exploration_band")
	}
	rates := func(r *Rates, path ...any) {
		if r == nil {
			return
		}
		if !(r.Fail > 0 && r.Fail < 1) {
			bad(fmt.Sprintf("fail must be a rate in (0, 1) (0.05 = a right model fails 1 time in 20), got %v", r.Fail), append(path, "fail")...)
		}
		if !(r.Warn >= r.Fail && r.Warn < 1) {
			bad(fmt.Sprintf("warn must be a rate in [fail, 1), got %v", r.Warn), append(path, "warn")...)
		}
	}
	rates(e.FalseAlarm, "evidence", "false_alarm")
	for _, f := range sortedKeys(e.Families) {
		if !knownFamily(f) {
			bad(unknownFamily(f), "evidence", "families", string(f))
		}
		rates(e.Families[f].FalseAlarm, "evidence", "families", string(f), "false_alarm")
		if e.Families[f].RawLimit != nil {
			bad("raw_limit is set per check (evidence.checks.NAME.raw_limit), not per family", "evidence", "families", string(f), "raw_limit")
		}
		action(e.Families[f].OnFail, "evidence", "families", string(f), "on_fail")
		action(e.Families[f].OnWarn, "evidence", "families", string(f), "on_warn")
	}
	for _, n := range sortedKeys(e.Checks) {
		if l := e.Checks[n].RawLimit; l != nil && (math.IsNaN(l.Warn) || math.IsInf(l.Warn, 0) || math.IsNaN(l.Fail) || math.IsInf(l.Fail, 0)) {
			bad("raw_limit warn and fail must be finite numbers", "evidence", "checks", n, "raw_limit")
		}
		if e.Checks[n].FalseAlarm != nil {
			bad("false_alarm is set per family (evidence.families.F.false_alarm), not per check", "evidence", "checks", n, "false_alarm")
		}
		action(e.Checks[n].OnFail, "evidence", "checks", n, "on_fail")
		action(e.Checks[n].OnWarn, "evidence", "checks", n, "on_warn")
	}
	for _, role := range sortedKeys(e.Waivers) {
		if _, ok := p.Roles[role]; !ok {
			bad(undefinedRole(role, p.Roles), "evidence", "waivers", role)
		}
		for i, f := range e.Waivers[role].Families {
			if !knownFamily(f) {
				bad(unknownFamily(f), "evidence", "waivers", role, "families", i)
			}
		}
		for i, n := range e.Waivers[role].Checks {
			if strings.TrimSpace(n) == "" {
				bad("check name must not be empty", "evidence", "waivers", role, "checks", i)
			}
		}
	}

	for _, role := range sortedKeys(p.Roles) {
		if strings.TrimSpace(role) != role || role == "" {
			bad("role name must be non-empty, without surrounding spaces", "roles", role)
		}
		for i, k := range p.Roles[role].Keys {
			if strings.TrimSpace(k) == "" {
				bad("key must be PEM text or \"PATH sha256:FINGERPRINT\", got an empty string", "roles", role, "keys", i)
				continue
			}
			if _, err := parseKeyEntry(k); err != nil {
				bad(err.Error(), "roles", role, "keys", i)
			}
		}
	}
	// Separation of duties: one key, one role, unless the policy says so.
	holder := map[string]string{}
	for _, role := range sortedKeys(p.Roles) {
		for i, k := range p.Roles[role].Keys {
			e, err := parseKeyEntry(k)
			if err != nil {
				continue
			}
			if other, ok := holder[e.Fingerprint]; ok && other != role && !p.Signing.AllowSharedSigners {
				bad(fmt.Sprintf("key %s is also listed for role %q: one signer cannot fill two roles (separation of duties) unless signing.allow_shared_signers is true",
					e.Fingerprint[:len(FingerprintPrefix)+16], other), "roles", role, "keys", i)
			} else if ok && other == role {
				bad(fmt.Sprintf("key %s is listed twice for role %q", e.Fingerprint[:len(FingerprintPrefix)+16], role), "roles", role, "keys", i)
			}
			holder[e.Fingerprint] = role
		}
	}
	if len(p.Signoffs) == 0 && !p.Signing.AllowUnsigned {
		bad("no sign-off rule: a policy that requires nobody to sign must say so with signing.allow_unsigned: true", "signoffs")
	}
	if p.Signing.MaxAgeDays < 0 {
		bad("must not be negative (0: no limit)", "signing", "max_age_days")
	}

	names := map[string]int{}
	for i, rule := range p.Signoffs {
		if strings.TrimSpace(rule.Name) == "" {
			bad("every sign-off rule needs a name (it is given as the reason)", "signoffs", i, "name")
		} else if j, dup := names[rule.Name]; dup {
			bad(fmt.Sprintf("name %q is already used by signoffs[%d]", rule.Name, j), "signoffs", i, "name")
		} else {
			names[rule.Name] = i
		}
		if len(rule.Roles) == 0 {
			bad("list the roles that must sign", "signoffs", i, "roles")
		}
		for j, role := range rule.Roles {
			if _, ok := p.Roles[role]; !ok {
				bad(undefinedRole(role, p.Roles), "signoffs", i, "roles", j)
			}
		}
		kinds := rule.When.Kinds()
		if len(kinds) != 1 {
			bad(fmt.Sprintf("give exactly one condition (always, moved_above, moved_share_above, change_above, cut_below, cut_below_support, any_waiver, verdict_in), found %d%s",
				len(kinds), listed(kinds)), "signoffs", i, "when")
		}
		w := rule.When
		for _, c := range []struct {
			v    *float64
			key  string
			frac bool
		}{{w.MovedAbove, "moved_above", false}, {w.MovedShareAbove, "moved_share_above", true},
			{w.ChangeAbove, "change_above", true}, {w.CutBelow, "cut_below", false}} {
			if c.v != nil && finite(*c.v, "signoffs", i, "when", c.key) && *c.v < 0 {
				bad("must not be negative", "signoffs", i, "when", c.key)
			}
		}
		for j, v := range w.VerdictIn {
			if !contains(Verdicts, v) {
				bad(fmt.Sprintf("unknown verdict %q (known: %s)", v, strings.Join(Verdicts, ", ")), "signoffs", i, "when", "verdict_in", j)
			}
		}
	}
	return first
}

func listed(k []string) string {
	if len(k) == 0 {
		return ""
	}
	return " (" + strings.Join(k, ", ") + ")"
}

func knownFamily(f validation.Family) bool { return contains(Families, f) }

func unknownFamily(f validation.Family) string {
	known := make([]string, len(Families))
	for i, f := range Families {
		known[i] = string(f)
	}
	return fmt.Sprintf("unknown check family %q (known: %s)", f, strings.Join(known, ", "))
}

func undefinedRole(role string, roles map[string]Role) string {
	known := sortedKeys(roles)
	if len(known) == 0 {
		return fmt.Sprintf("role %q is not defined (the policy defines no roles)", role)
	}
	return fmt.Sprintf("role %q is not defined under roles (defined: %s)", role, strings.Join(known, ", "))
}
