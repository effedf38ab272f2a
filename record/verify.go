package record

import (
	"errors"
	"fmt"
	"io/fs"
	"regexp"
	"slices"
	"sort"
	"strings"
	"time"

	"sluice/gate"
	"sluice/internal/boundedio"
	"sluice/policies"
)

// Input states reported by [Verify].
const (
	Intact   = "intact"
	Changed  = "changed"
	NotFound = "not found"
)

// ClockSkew is how far in the future a signing time may lie before verify
// refuses it: clocks of different machines differ a little (common
// practice, no source).
const ClockSkew = 5 * time.Minute

// VerifyRequest is what [Verify] checks.
type VerifyRequest struct {
	Record     []byte // the record file's exact bytes
	Source     string // its path, for messages
	Signatures *Signatures
	Policy     *policies.Policy
	// Files maps an input name of the record (data, spec, plan, lifts,
	// draws, waivers, proposal) to the file to check in place of the path
	// the record names.
	Files map[string]string
	// Brief is a rendered brief (report.html) to check against the record,
	// with its path in BriefSource; nil: not checked.
	Brief       []byte
	BriefSource string
	Now         time.Time // for the signing times; zero: time.Now()
}

// InputCheck is what verify found for one input the record names.
type InputCheck struct {
	Name, Path, State string
	Detail            string // for a changed input: the hashes
}

// Verification is the outcome of [Verify]. It verifies when Problems is
// empty.
type Verification struct {
	Decision *Decision // nil when the record does not parse
	Problems []string
	Inputs   []InputCheck
	// Required are the sign-offs the policy's rules require of this
	// record, derived from its content (never copied from it).
	Required []gate.Signoff
	// NoSignoffRequired is true when no rule requires anyone to sign and
	// the policy allows that (signing.allow_unsigned).
	NoSignoffRequired bool
	Signed            []Signoff // the sign-offs that hold, file order
	Withdrawn         []Signoff // valid withdrawals, file order
	Notes             []string  // what was seen but does not decide, e.g. a withdrawal that cannot be checked
}

// Verify checks a decision record, and returns everything it checked.
//
// It checks: the record parses strictly (see [ParseDecision]); the policy
// is the one the record was made with (its SHA-256, which covers the keys
// it pins); every input the record names whose file can be found hashes as
// recorded (a changed input is a problem, one not found is reported); the
// record's list of required sign-offs equals the list the policy's rules
// give for the record's moves, verdict and waivers; every sign-off's
// signature holds, over the record's exact bytes, for a key the policy
// lists for its role, with a signing time that is neither in the future
// nor older than the policy's signing.max_age_days; each required role
// holds such a sign-off, or, when none is required, the policy says
// signing.allow_unsigned; every withdrawal is valid and no withdrawn
// sign-off is counted; waivers come from roles the policy lets waive them;
// a brief, when given, names the record's SHA-256; and the verdict is not
// refuse.
func Verify(req VerifyRequest) *Verification {
	v := &Verification{}
	now := req.Now
	if now.IsZero() {
		now = time.Now()
	}
	d, err := ParseDecision(req.Record, req.Source)
	if err != nil {
		v.Problems = append(v.Problems, err.Error())
		return v
	}
	v.Decision = d
	p := req.Policy
	fail := func(format string, args ...any) { v.Problems = append(v.Problems, fmt.Sprintf(format, args...)) }

	// The policy, then every other input the record names.
	polHash := SHA256Hex(p.Raw)
	pc := InputCheck{Name: "policy", Path: p.Source, State: Intact}
	if polHash != d.PolicySHA256 || (d.Inputs["policy"].SHA256 != "" && d.Inputs["policy"].SHA256 != polHash) {
		pc.State, pc.Detail = Changed, fmt.Sprintf("sha256 %s, the record names %s", short(polHash), short(d.PolicySHA256))
		fail("policy %s has sha256 %s, but the record was made with policy %s: the policy changed after the decision (its keys and rules are part of it)",
			p.Source, short(polHash), short(d.PolicySHA256))
	}
	v.Inputs = append(v.Inputs, pc)
	names := make([]string, 0, len(d.Inputs))
	for n := range d.Inputs {
		if n != "policy" {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	for _, n := range names {
		in := d.Inputs[n]
		path := in.Path
		if f, ok := req.Files[n]; ok && f != "" {
			path = f
		}
		c := InputCheck{Name: n, Path: path}
		got, err := hashFile(path)
		switch {
		case (errors.Is(err, fs.ErrNotExist) || path == "") && req.Files[n] != "":
			c.State = NotFound
			fail("%s file %s, given to check, does not exist", n, path)
		case errors.Is(err, fs.ErrNotExist) || path == "":
			c.State = NotFound
		case err != nil:
			c.State = NotFound
			c.Detail = err.Error()
		case got == in.SHA256:
			c.State = Intact
		default:
			c.State, c.Detail = Changed, fmt.Sprintf("sha256 %s, the record names %s", short(got), short(in.SHA256))
			if n == "waivers" {
				// An earlier record's signatures file grows as people sign
				// it: what matters is that every waiver this record applied
				// is still signed there.
				if msg := waiversStillSigned(path, d, p); msg != "" {
					fail("waivers %s: %s", path, msg)
				} else {
					c.Detail += "; every waiver the record applied is still signed there"
				}
				break
			}
			fail("%s %s has sha256 %s, but the record was made from %s (%s): the %s changed after the decision",
				n, path, short(got), in.Path, short(in.SHA256), n)
		}
		v.Inputs = append(v.Inputs, c)
	}
	for n := range req.Files {
		if _, ok := d.Inputs[n]; !ok && req.Files[n] != "" {
			fail("%s file %s given to check, but the record names no %s input", n, req.Files[n], n)
		}
	}

	// The required sign-offs, from the policy's rules on the record's content.
	if len(d.Support) != len(d.Channels) || len(d.Moves) != len(d.Channels) {
		fail("the record has %d channels, %d moves and %d support ranges: the required sign-offs cannot be derived from it",
			len(d.Channels), len(d.Moves), len(d.Support))
	} else {
		v.Required = gate.RequiredSignoffs(p, &d.Decision, d.Support, d.Horizon)
		if diff := signoffDiff(d.SignoffsRequired, v.Required); diff != "" {
			fail("the record's list of required sign-offs is not what policy %s requires of this decision: %s", p.Name, diff)
		}
	}

	// Signatures.
	ring, err := PolicyKeyring(p)
	if err != nil {
		fail("%v", err)
		return v
	}
	var sigs Signatures
	if req.Signatures != nil {
		sigs = *req.Signatures
	}
	withdrawnAt := map[[2]string]time.Time{}
	for i, o := range evaluateOf(WithdrawalType, req.Record, sigs.Withdrawals, ring) {
		w := sigs.Withdrawals[i]
		if o.problem != "" {
			// A withdrawal only takes a sign-off away, which editing the
			// file could do too: one that cannot be checked (say, of a role
			// the policy lacks) is reported, not a failure.
			v.Notes = append(v.Notes, fmt.Sprintf("withdrawal %d (role %q, key %s) not checked: %s", i+1, w.Role, w.KeyID,
				strings.TrimPrefix(o.problem, fmt.Sprintf("sign-off %d (role %q, key %s): ", i+1, w.Role, w.KeyID))))
			continue
		}
		v.Withdrawn = append(v.Withdrawn, w)
		k := [2]string{w.Role, w.KeyID}
		if w.SignedAt.After(withdrawnAt[k]) {
			withdrawnAt[k] = w.SignedAt
		}
	}
	limit := time.Duration(p.Signing.MaxAgeDays) * 24 * time.Hour
	var roles []string
	for i, o := range evaluate(req.Record, sigs.Signoffs, ring) {
		s := sigs.Signoffs[i]
		if o.problem != "" {
			fail("%s", o.problem)
			continue
		}
		at := fmt.Sprintf("sign-off %d (role %q, key %s)", i+1, s.Role, s.KeyID)
		switch {
		case s.SignedAt.IsZero():
			fail("%s carries no signing time; sign again with this version of sluice", at)
			continue
		case s.SignedAt.After(now.Add(ClockSkew)):
			fail("%s is dated %s, in the future", at, formatTime(s.SignedAt))
			continue
		case limit > 0 && now.Sub(s.SignedAt) > limit:
			fail("%s was signed %s, more than the policy's %d days ago (signing.max_age_days); the decision must be signed again",
				at, formatTime(s.SignedAt), p.Signing.MaxAgeDays)
			continue
		}
		if w, ok := withdrawnAt[[2]string{s.Role, s.KeyID}]; ok && !s.SignedAt.After(w) {
			fail("%s was withdrawn at %s", at, formatTime(w))
			continue
		}
		v.Signed = append(v.Signed, s)
		if !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
		for _, wv := range s.Waivers {
			c, ok := findCheck(d, wv.Check)
			if !ok {
				fail("waiver of %q by %s: the record has no such check", wv.Check, s.Role)
				continue
			}
			if !p.Evidence.MayWaive(s.Role, c) {
				fail("waiver of %q by %s: the policy does not let %s waive it", wv.Check, s.Role, s.Role)
			}
		}
	}
	if v.Required != nil {
		for _, req := range v.Required {
			if !slices.Contains(roles, req.Role) {
				fail("missing sign-off: %s (rule %s: %s)", req.Role, req.Rule, req.Explanation)
			}
		}
		if len(v.Required) == 0 {
			if p.Signing.AllowUnsigned {
				v.NoSignoffRequired = true
			} else {
				fail("no sign-off rule of policy %s fires for this decision, and the policy does not allow unsigned decisions (signing.allow_unsigned)", p.Name)
			}
		}
	}

	if req.Brief != nil {
		if err := CheckBrief(req.Brief, req.BriefSource, req.Record); err != nil {
			fail("%v", err)
			v.Inputs = append(v.Inputs, InputCheck{Name: "brief", Path: req.BriefSource, State: Changed, Detail: err.Error()})
		} else {
			v.Inputs = append(v.Inputs, InputCheck{Name: "brief", Path: req.BriefSource, State: Intact})
		}
	}
	if d.Verdict == gate.Refuse {
		fail("the decision is refuse: a refused decision cannot be verified as approved")
	}
	return v
}

// signoffDiff describes how the record's list differs from the derived one,
// or returns "" when they are equal.
func signoffDiff(recorded, derived []gate.Signoff) string {
	key := func(s gate.Signoff) string { return s.Role + " (rule " + s.Rule + ")" }
	var extra, missing []string
	for _, s := range derived {
		if !slices.Contains(recorded, s) {
			missing = append(missing, key(s))
		}
	}
	for _, s := range recorded {
		if !slices.Contains(derived, s) {
			extra = append(extra, key(s))
		}
	}
	var parts []string
	if len(missing) > 0 {
		parts = append(parts, "it leaves out "+strings.Join(missing, ", "))
	}
	if len(extra) > 0 {
		parts = append(parts, "it lists "+strings.Join(extra, ", ")+", which the policy does not require here (or with other words)")
	}
	if len(parts) == 0 && len(recorded) != len(derived) {
		parts = append(parts, fmt.Sprintf("it lists %d entries, the policy gives %d", len(recorded), len(derived)))
	}
	return strings.Join(parts, "; ")
}

func hashFile(path string) (string, error) {
	if path == "" || strings.HasPrefix(path, "preset:") {
		return "", fs.ErrNotExist
	}
	return boundedio.SHA256(path, boundedio.MaxDraws) // inputs include draws files
}

// BriefMetaName is the name of the <meta> element in a brief's head whose
// content is the hex SHA-256 of the record the brief was rendered from.
// The brief's footer shows the same hash as text after [BriefHashLabel].
const BriefMetaName = "sluice-record-sha256"

// BriefHashLabel starts the footer line of a brief that names its record.
const BriefHashLabel = "Rendered from decision record SHA-256 "

var briefMeta = regexp.MustCompile(`<meta name="` + BriefMetaName + `" content="([0-9a-f]{64})">`)

// CheckBrief checks that a rendered brief names the record's SHA-256 in
// its head and, identically, in its footer, and nowhere names another.
func CheckBrief(brief []byte, source string, record []byte) error {
	want := SHA256Hex(record)
	ms := briefMeta.FindAllSubmatch(brief, -1)
	switch {
	case len(ms) == 0:
		return fmt.Errorf("brief %s names no record (no <meta name=%q>); render it with sluice report", source, BriefMetaName)
	case len(ms) > 1:
		return fmt.Errorf("brief %s names %d records; a brief names one", source, len(ms))
	case string(ms[0][1]) != want:
		return fmt.Errorf("brief %s was rendered from record %s, not from this record (%s)", source, short(string(ms[0][1])), short(want))
	}
	if !strings.Contains(string(brief), BriefHashLabel+want) {
		return fmt.Errorf("brief %s: its footer does not show the record's SHA-256 %s", source, short(want))
	}
	return nil
}

// waiversStillSigned checks that every waiver d accepted still holds in the
// signatures file at path: a valid sign-off, in the waiving role, over the
// earlier record beside it, with a key p lists for that role. It returns
// what is missing, or "".
func waiversStillSigned(path string, d *Decision, p *policies.Policy) string {
	sigs, err := ReadSignatures(path)
	if err != nil {
		return err.Error()
	}
	earlier := strings.TrimSuffix(path, ".signatures.json") + ".json"
	body, err := boundedio.ReadFile(earlier, boundedio.MaxInput)
	if err != nil {
		return fmt.Sprintf("the signed record beside it: %v", err)
	}
	ring, err := PolicyKeyring(p)
	if err != nil {
		return err.Error()
	}
	_, signed := SignedRoles(body, sigs.Signoffs, ring)
	var missing []string
	for _, w := range d.Waivers {
		if !w.Accepted {
			continue
		}
		if !slices.ContainsFunc(signed, func(s RoleWaiver) bool { return s.Role == w.Role && s.Waiver.Check == w.Check }) {
			missing = append(missing, fmt.Sprintf("%s by %s", w.Check, w.Role))
		}
	}
	if len(missing) > 0 {
		return "the waiver of " + strings.Join(missing, ", ") + " that this record applied is no longer signed there (withdrawn?)"
	}
	return ""
}
