package report

import (
	"cmp"
	"fmt"
	"html/template"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"sluice/gate"
	"sluice/policies"
	"sluice/record"
	"sluice/validation"
)

// view is what the template reads: every figure already in words.
type view struct {
	Title string
	// RecordMeta and RecordLine bind the brief to its record (see
	// Input.RecordSHA256); keep both in any redesign of the page.
	RecordMeta template.HTML
	RecordLine string
	Facts      []string
	Caution    string
	MoneyLine  string // what the amounts are: currency, what a gain is, over which weeks
	Currency   string // "EUR", or "" when unnamed
	Verdict    string // APPROVE, DOWNSIZE, REFUSE: the words the terminal prints
	VerdictID  string // approve, downsize, refuse
	Sentence   string
	Detail     string // the verdict's second line: what was held back and why
	Reasons    []string
	Figures    []figure
	RiskRows   []riskRow
	Forecast   string
	// ChecksLine sums up the evidence on the first page.
	ChecksLine string

	SignWhat    string
	Signoffs    []signRow
	SignSummary string
	AlsoSigned  string
	Waivers     []waiverRow

	Moves      []moveRow
	MovesTotal moveRow
	MovesChart template.HTML
	MovesLabel string
	Capped     []cappedMove

	GainChart   template.HTML
	GainCaption string

	Budget     []budgetRow
	BudgetNote string

	ContribChart   template.HTML
	ContribCaption string
	FitChart       template.HTML
	FitCaption     string

	Curves []curveView

	HoldoutChart   template.HTML
	HoldoutCaption string

	EffectChart   template.HTML
	EffectCaption string

	Problems        []evidenceRow // failed and warned checks
	EvidenceSummary string

	Inputs []inputRow
	Rerun  []fact
}

type figure struct{ Label, Value, Note string }

type riskRow struct{ Label, Proposed, Approved string }

type signRow struct {
	Role, Rules, Why        string
	KeyID, Signer, SignedAt string
	Signed                  bool
}

type budgetRow struct {
	Change, Budget, Weekly, Gain, Band, Marginal string
	Current                                      bool // the decision's own budget
}

type waiverRow struct {
	Check, Role, Reason string
	Accepted            bool
}

type moveRow struct {
	Channel                               string
	Current, Proposed, ChangeProposed     string
	Approved, ChangeApproved, ShareOfMove string
	Why                                   string // what set the approved spend, true of it
	Held                                  bool   // approved differs from proposed
}

type cappedMove struct {
	Channel string
	SetBy   string   // the reason that set the approved spend
	Others  []string // the gate's other reasons for this channel
	Step    string
}

type curveView struct {
	Channel string
	Chart   template.HTML
	Caption string
}

type evidenceRow struct {
	Family, Name, Scope, Status, StatusID string
	Meaning, Detail, Effect               string
}

type inputRow struct{ Name, Path, SHA256 string }

type fact struct{ Label, Value string }

func newView(in Input) (*view, error) {
	d := in.Record
	h := d.Horizon
	if h <= 0 {
		h = d.Forecast.Weeks
	}
	weeks := plural(h, "week", "weeks")
	kpi := cmp.Or(d.KPI, "KPI")
	v := &view{
		Title:   "Paid-media budget decision",
		Caution: cmp.Or(d.Caution, record.Caution),
	}
	if in.Title != "" {
		v.Title = in.Title + ": paid-media budget decision"
	}
	if h := in.RecordSHA256; h != "" {
		if len(h) != 64 || strings.Trim(h, "0123456789abcdef") != "" {
			return nil, fmt.Errorf("report: record SHA-256 %q is not 64 lowercase hex digits", h)
		}
		v.RecordMeta = template.HTML(`<meta name="` + record.BriefMetaName + `" content="` + h + `">`)
		v.RecordLine = record.BriefHashLabel + h
	}
	if d.AsOf != "" {
		v.Facts = append(v.Facts, "data to the week of "+d.AsOf)
	}
	v.Facts = append(v.Facts, "horizon "+weeks, "KPI "+kpi)
	if d.Policy != "" {
		v.Facts = append(v.Facts, "policy "+d.Policy)
	}
	if d.Draws.Count > 0 {
		v.Facts = append(v.Facts, strconv.Itoa(d.Draws.Count)+" draws")
	}
	v.money(d, in.Money, weeks, kpi)

	v.verdict(d, weeks)
	v.figures(d, weeks)
	v.SignWhat = fmt.Sprintf("%s a week moved between channels, %s over the %s", v.amount(d.Risk.Approved.MovedPerWeek), money(d.Risk.Approved.MovedHorizon), weeks)
	if d.Verdict == gate.Refuse {
		v.SignWhat = "no money moves; every channel keeps its current spend"
	}
	v.signoffs(d, in.Signed, in.Signatures)
	if err := v.moves(d); err != nil {
		return nil, err
	}
	if err := v.gains(d, in.Gains, weeks); err != nil {
		return nil, err
	}
	v.budget(in.Budget, h)
	if c := in.Contributions; c != nil && len(c.Weeks) >= 2 {
		if err := v.contributions(c, kpi); err != nil {
			return nil, err
		}
	}
	for i, cb := range in.Curves {
		doc, err := curveChart(cb, h, kpi)
		if err != nil {
			return nil, err
		}
		caption := curveCaption(cb, weeks)
		svg, err := inlineSVG(doc, "chart-curve-"+strconv.Itoa(i+1), "Response curve of "+cb.Channel+". "+caption)
		if err != nil {
			return nil, err
		}
		v.Curves = append(v.Curves, curveView{Channel: cb.Channel, Chart: svg, Caption: caption})
	}
	if err := v.effect(in.Effect); err != nil {
		return nil, err
	}
	if in.Holdout != nil {
		doc, err := holdoutChart(in.Holdout, kpi)
		if err != nil {
			return nil, err
		}
		v.HoldoutCaption = holdoutCaption(in.Holdout, kpi)
		if v.HoldoutChart, err = inlineSVG(doc, "chart-holdout", "Holdout weeks: actual "+kpi+" against the forecast. "+v.HoldoutCaption); err != nil {
			return nil, err
		}
	}
	v.evidence(d)
	v.rerun(d)
	return v, nil
}

// amount is money with the currency named after it, for the figures a
// reader quotes ("16,840 EUR").
func (v *view) amount(x float64) string {
	if v.Currency == "" {
		return money(x)
	}
	return money(x) + " " + v.Currency
}

func (v *view) signedAmount(x float64) string {
	if v.Currency == "" {
		return signedMoney(x)
	}
	return signedMoney(x) + " " + v.Currency
}

// money says, once and at the top, what the brief's amounts are: the
// currency, what a gain is (profit: margin × KPI value − spend) and over
// which weeks.
func (v *view) money(d *record.Decision, m *Money, weeks, kpi string) {
	cur := "the currency of the spend columns (the plan names none; add currency: to the plan file)"
	if m != nil && m.Currency != "" {
		v.Currency = m.Currency
		cur = m.Currency
	}
	value := "KPI value"
	margin := "margin"
	if m != nil {
		value = kpi
		if m.ValuePerKPI != 1 {
			value = fmt.Sprintf("%s × %s per unit", kpi, strconv.FormatFloat(m.ValuePerKPI, 'f', -1, 64))
		}
		margin = "margin " + pct(m.Margin)
	}
	when := "the " + weeks + " of the horizon"
	if d.Forecast.Start != "" {
		when = "the " + weeks + " from the week of " + d.Forecast.Start
	}
	v.MoneyLine = fmt.Sprintf("Amounts are in %s; spend is per week unless said otherwise. A gain is profit: %s × %s − spend, over %s (with the carryover of that spend after them), against keeping every channel at its current spend.",
		cur, margin, value, when)
}

// verdict writes the decision in one sentence, in the words the terminal
// prints (approve, downsize, refuse), naming the channels held back.
func (v *view) verdict(d *record.Decision, weeks string) {
	prop, appr := d.Risk.Proposed, d.Risk.Approved
	v.VerdictID = string(d.Verdict)
	v.Verdict = strings.ToUpper(cmp.Or(string(d.Verdict), "unknown"))
	why := ""
	switch d.Verdict {
	case gate.Approve:
		v.Sentence = fmt.Sprintf("Approve: move %s a week as proposed, %s over the %s.",
			v.amount(appr.MovedPerWeek), money(appr.MovedHorizon), weeks)
	case gate.Downsize:
		var kept, part []string
		for _, m := range d.Moves {
			switch {
			case math.Abs(m.Approved-m.Proposed) <= 0.5:
			case math.Abs(m.Approved-m.Current) <= 0.5:
				kept = append(kept, m.Channel)
			default:
				part = append(part, m.Channel)
			}
		}
		v.Sentence = fmt.Sprintf("Downsize: move %s a week of the %s proposed.", v.amount(appr.MovedPerWeek), money(prop.MovedPerWeek))
		var held []string
		if len(kept) > 0 {
			held = append(held, joinAnd(kept)+" "+isAre(len(kept), "keeps", "keep")+" current spend")
		}
		if len(part) > 0 {
			held = append(held, joinAnd(part)+" "+isAre(len(part), "moves", "move")+" part of the way")
		}
		var detail []string
		if len(held) > 0 {
			detail = append(detail, "Held back: "+strings.Join(held, "; ")+".")
		}
		if why = wholePlanReason(d); why != "" {
			detail = append(detail, "The approved plan is also scaled down because "+sentenceEnd(why)+".")
		}
		v.Detail = strings.Join(detail, " ")
	default:
		why = "the policy does not approve it"
		if len(d.Reasons) > 0 {
			why = d.Reasons[0]
		}
		if prop.MovedPerWeek == 0 {
			v.Sentence = "Refuse: " + sentenceEnd(why) + "."
		} else {
			v.Sentence = fmt.Sprintf("Refuse: none of the %s a week proposed is moved, because %s.",
				v.amount(prop.MovedPerWeek), sentenceEnd(why))
		}
	}
	for _, r := range d.Reasons {
		// Check results are listed, with their channel and meaning, in
		// the evidence section; here only reasons about the decision.
		// "the moves of ... are held back" is what the sentence says.
		if r != why && !strings.HasPrefix(r, "check ") && !strings.HasPrefix(r, "the moves of ") {
			v.Reasons = append(v.Reasons, r)
		}
	}
}

func isAre(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// wholePlanReason is the gate's reason about the proposal as a whole, if
// it gave one.
func wholePlanReason(d *record.Decision) string {
	for _, r := range d.Reasons {
		if strings.HasPrefix(r, "the proposal as a whole") || strings.HasPrefix(r, "together the channels") {
			return r
		}
	}
	return ""
}

// sentenceEnd drops a final period, so a reason can close a sentence.
func sentenceEnd(s string) string { return strings.TrimRight(strings.TrimSpace(s), ".") }

func (v *view) figures(d *record.Decision, weeks string) {
	a, p := d.Risk.Approved, d.Risk.Proposed
	bad := fmt.Sprintf("a gain, not a loss: %s of draws gain at least this", pct(1-a.DownsideLevel))
	if math.Round(a.Downside) == 0 {
		bad = fmt.Sprintf("no gain, no loss: %s of draws gain at least this", pct(1-a.DownsideLevel))
	}
	if math.Round(a.Downside) < 0 {
		bad = fmt.Sprintf("a loss: %s of draws lose more than %s", pct(a.DownsideLevel), money(-a.Downside))
	}
	v.Figures = []figure{
		{"Money moved a week", v.amount(a.MovedPerWeek), money(a.MovedHorizon) + " over the " + weeks},
		{"Expected profit gain", v.signedAmount(a.ExpectedGain), fmt.Sprintf("over the %s; 90%% of draws %s to %s", weeks, signedMoney(a.P05), signedMoney(a.P95))},
		{"Chance of a loss", pct(a.PLoss), "share of draws in which the approved plan loses money"},
		{"Bad case: " + percentileName(a.DownsideLevel), v.signedAmount(a.Downside), bad},
	}
	row := func(label string, f func(r gate.Risk) string) riskRow {
		return riskRow{label, f(p), f(a)}
	}
	p05 := "Gain at the 5th percentile"
	if a.DownsideLevel == 0.05 {
		p05 += " (the policy's downside)"
	}
	v.RiskRows = []riskRow{
		row("Money moved a week", func(r gate.Risk) string { return money(r.MovedPerWeek) }),
		row("Expected gain", func(r gate.Risk) string { return signedMoney(r.ExpectedGain) }),
		row("Median gain", func(r gate.Risk) string { return signedMoney(r.P50) }),
		row(p05, func(r gate.Risk) string { return signedMoney(r.P05) }),
		row("Gain at the 95th percentile", func(r gate.Risk) string { return signedMoney(r.P95) }),
		row("Chance of a loss", func(r gate.Risk) string { return pct(r.PLoss) }),
	}
	if a.DownsideLevel != 0.05 { // else it is the 5th percentile row above
		v.RiskRows = append(v.RiskRows, row("Downside: gain at the "+percentileName(a.DownsideLevel), func(r gate.Risk) string { return signedMoney(r.Downside) }))
	}
	v.RiskRows = append(v.RiskRows, row("Average gain of the worst "+pct(a.CVaRLevel)+" (CVaR)", func(r gate.Risk) string { return signedMoney(r.CVaR) }))
	if f := d.Forecast; f.Weeks > 0 {
		from := ""
		if f.Start != "" {
			from = " from the week of " + f.Start
		}
		v.Forecast = fmt.Sprintf("Under the approved plan the model expects %s of %s over the %s%s (90%% band %s to %s). Next quarter's reconciliation compares this with what happens.",
			money(d.ForecastTotal[1]), cmp.Or(d.KPI, "KPI"), plural(f.Weeks, "week", "weeks"), from, money(d.ForecastTotal[0]), money(d.ForecastTotal[2]))
	}
}

func (v *view) signoffs(d *record.Decision, signed []string, sigs []Signature) {
	var roles []string
	for _, s := range d.SignoffsRequired {
		if !slices.Contains(roles, s.Role) {
			roles = append(roles, s.Role)
		}
	}
	isSigned := func(role string) bool {
		return slices.Contains(signed, role) || slices.ContainsFunc(sigs, func(s Signature) bool { return s.Role == role })
	}
	var missing []string
	for _, role := range roles {
		row := signRow{Role: role, Signed: isSigned(role)}
		var rules, why []string
		for _, s := range d.SignoffsRequired {
			if s.Role == role {
				rules, why = append(rules, s.Rule), append(why, s.Explanation)
			}
		}
		row.Rules, row.Why = strings.Join(rules, ", "), strings.Join(why, "; ")
		var ids, who, when []string
		for _, s := range sigs {
			if s.Role == role {
				ids, who, when = append(ids, s.KeyID), append(who, cmp.Or(s.Signer, "not named")), append(when, cmp.Or(s.SignedAt, "not recorded"))
			}
		}
		row.KeyID, row.Signer, row.SignedAt = strings.Join(ids, ", "), strings.Join(who, ", "), strings.Join(when, ", ")
		v.Signoffs = append(v.Signoffs, row)
		if !row.Signed {
			missing = append(missing, role)
		}
	}
	var extra []string
	for _, r := range signed {
		if !slices.Contains(roles, r) && !slices.Contains(extra, r) {
			extra = append(extra, r)
		}
	}
	for _, s := range sigs {
		if !slices.Contains(roles, s.Role) && !slices.Contains(extra, s.Role) {
			extra = append(extra, s.Role)
		}
	}
	v.AlsoSigned = joinAnd(extra)
	need := len(roles)
	switch {
	case need == 0:
		v.SignSummary = "The policy asks for no sign-off on this decision."
	case len(missing) == 0:
		v.SignSummary = fmt.Sprintf("All %s have been given.", plural(need, "required sign-off", "required sign-offs"))
	default:
		v.SignSummary = fmt.Sprintf("%d of %s given; still needed: %s.", need-len(missing), plural(need, "required sign-off", "required sign-offs"), joinAnd(missing))
	}
	for _, w := range d.Waivers {
		v.Waivers = append(v.Waivers, waiverRow{Check: w.Check, Role: w.Role, Reason: w.Reason, Accepted: w.Accepted})
	}
}

func (v *view) moves(d *record.Decision) error {
	var cur, prop, appr, dp, da float64
	var names []string
	var cs, ps, as []float64
	for _, m := range d.Moves {
		setBy, first := settingReason(m, d.Checks)
		if d.Verdict == gate.Refuse && math.Abs(m.Proposed-m.Current) > 0.5 {
			setBy, first = "kept at current spend: the decision is refused", -1
		}
		row := moveRow{
			Channel: m.Channel, Current: money(m.Current), Proposed: money(m.Proposed),
			ChangeProposed: signedMoney(m.Proposed - m.Current),
			Approved:       money(m.Approved), ChangeApproved: signedMoney(m.Approved - m.Current),
			ShareOfMove: "—", Why: setBy,
			Held: math.Abs(m.Approved-m.Proposed) > 0.5,
		}
		if dprop := m.Proposed - m.Current; math.Abs(dprop) > 0.5 {
			row.ShareOfMove = pct(math.Round((m.Approved-m.Current)/dprop*1000) / 1000)
		}
		v.Moves = append(v.Moves, row)
		cur, prop, appr = cur+m.Current, prop+m.Proposed, appr+m.Approved
		dp, da = dp+m.Proposed-m.Current, da+m.Approved-m.Current
		names = append(names, m.Channel)
		cs, ps, as = append(cs, m.Current), append(ps, m.Proposed), append(as, m.Approved)
		if len(m.Reasons) > 0 && row.Held {
			c := cappedMove{Channel: m.Channel}
			if first >= 0 {
				c.SetBy = m.Reasons[first]
				if strings.HasPrefix(c.SetBy, "check ") {
					// What the check found is in the evidence table.
					c.SetBy = shortReason(c.SetBy) + " (what it found is under The evidence)"
					if _, policy, ok := strings.Cut(m.Reasons[first], "; the policy "); ok {
						c.SetBy = shortReason(m.Reasons[first]) + "; the policy " + policy
					}
				}
			} else {
				c.SetBy = setBy
			}
			for i, r := range m.Reasons {
				// The first clause only: a check's findings are in the
				// evidence table, with the channel and what they mean.
				if i != first && !slices.Contains(c.Others, shortReason(r)) {
					c.Others = append(c.Others, shortReason(r))
				}
			}
			if d.Verdict == gate.Downsize && m.SafeStep < 1 && m.Proposed != m.Current && math.Abs(m.SafeStepPerWeek-(m.Approved-m.Current)) > 0.5 {
				c.Step = fmt.Sprintf("On its own, %s of this move (%s a week) meets the policy.", pct(m.SafeStep), money(math.Abs(m.SafeStepPerWeek)))
			}
			v.Capped = append(v.Capped, c)
		}
	}
	v.MovesTotal = moveRow{Channel: "Total", Current: money(cur), Proposed: money(prop), ChangeProposed: signedMoney(dp),
		Approved: money(appr), ChangeApproved: signedMoney(da), ShareOfMove: ""}
	if len(d.Moves) == 0 {
		return nil
	}
	doc, err := movesChart(names, cs, ps, as)
	if err != nil {
		return err
	}
	var parts []string
	for _, m := range d.Moves {
		parts = append(parts, fmt.Sprintf("%s: current %s, proposed %s, approved %s", m.Channel, money(m.Current), money(m.Proposed), money(m.Approved)))
	}
	v.MovesLabel = "Weekly spend by channel. " + strings.Join(parts, "; ") + "."
	v.MovesChart, err = inlineSVG(doc, "chart-moves", v.MovesLabel)
	return err
}

var (
	// The gate's reasons quote the numbers they are about; these read
	// them back, so the brief shows beside a number only a reason that is
	// true of it.
	heldTo   = regexp.MustCompile(`held to a change of ([0-9][0-9,]*(?:\.[0-9]+)?)/week`)
	reduced  = regexp.MustCompile(`reduced from a change of [0-9][0-9,]*(?:\.[0-9]+)?/week to ([0-9][0-9,]*(?:\.[0-9]+)?)/week`)
	support  = regexp.MustCompile(`is (?:beyond|below) what the data supports: .*that is ([0-9][0-9,]*(?:\.[0-9]+)?)/week`)
	funded   = regexp.MustCompile(` \((?:funded from|moved to) [^)]*\)`)
	bandOf   = regexp.MustCompile(`within ±[0-9.]+% of current spend \(([0-9][0-9,]*(?:\.[0-9]+)?) to ([0-9][0-9,]*(?:\.[0-9]+)?)/week`)
	atMostOf = regexp.MustCompile(`at most ([0-9][0-9,]*(?:\.[0-9]+)?)/week meets the policy`)
)

func parseAmount(s string) float64 {
	x, err := strconv.ParseFloat(strings.ReplaceAll(s, ",", ""), 64)
	if err != nil {
		return math.NaN()
	}
	return x
}

// settingReason says what set a channel's approved spend, in a phrase
// that is true of the approved number, and returns the index of the
// gate's reason it comes from (-1 when the phrase is the brief's own).
//
// A reason sets the number when the number is where the reason puts it:
// a hold by a failed check when the channel keeps its current spend; a
// band (±x% of current spend) when the approved spend is at the band's
// edge; "held to a change of X" or "at most X meets the policy" when the
// approved change is X, to the unit (the gate writes whole units).
func settingReason(m gate.Move, checks []gate.CheckUse) (string, int) {
	change := m.Approved - m.Current
	switch {
	case math.Abs(m.Proposed-m.Current) <= 0.5:
		return "no change proposed", -1
	case math.Abs(m.Approved-m.Proposed) <= 0.5:
		return "as proposed", -1
	}
	atCurrent := math.Abs(change) <= 0.5
	if atCurrent {
		for _, c := range checks {
			if c.Scope != m.Channel || c.Status == validation.Pass || c.WaivedBy != "" {
				continue
			}
			if c.Action != policies.Hold && c.Action != policies.Refuse {
				continue
			}
			status := "failed"
			if c.Status == validation.Warn {
				status = "warned"
			}
			idx := slices.IndexFunc(m.Reasons, func(r string) bool {
				return strings.HasPrefix(r, "check "+c.Name+" (") && strings.Contains(r, c.Detail)
			})
			return fmt.Sprintf("kept at current spend: check %s %s", c.Name, status), idx
		}
	}
	near := func(x float64) bool { return math.Abs(x-math.Abs(change)) <= 1 }
	scaled := -1
	for i, r := range m.Reasons {
		if strings.HasPrefix(r, "together the channels' safe steps break the policy") {
			scaled = i
			continue
		}
		if s := reduced.FindStringSubmatch(r); s != nil {
			if near(parseAmount(s[1])) {
				return shortReason(r), i
			}
			continue
		}
		if s := support.FindStringSubmatch(r); s != nil {
			if math.Abs(parseAmount(s[1])-m.Approved) <= 1 {
				return shortReason(r), i
			}
			continue
		}
		if s := heldTo.FindStringSubmatch(r); s != nil {
			if near(parseAmount(s[1])) {
				return shortReason(r), i
			}
			continue
		}
		if s := bandOf.FindStringSubmatch(r); s != nil {
			lo, hi := parseAmount(s[1]), parseAmount(s[2])
			if math.Abs(m.Approved-lo) <= 1 || math.Abs(m.Approved-hi) <= 1 {
				return shortReason(r), i
			}
			continue
		}
		if s := atMostOf.FindStringSubmatch(r); s != nil {
			if near(parseAmount(s[1])) {
				return shortReason(r), i
			}
			continue
		}
	}
	if scaled >= 0 {
		// The whole plan was scaled after the steps above were set: the
		// numbers in the channel's other reasons are from before.
		return "every move scaled down so that the plan as a whole meets the policy", scaled
	}
	share := pct(math.Round(change/(m.Proposed-m.Current)*1000) / 1000)
	if atCurrent {
		return "kept at current spend; the gate's reasons are under The moves in detail", -1
	}
	return fmt.Sprintf("%s of the proposed move approved; the gate's reasons are under The moves in detail", share), -1
}

// shortReason is a reason's first clause, up to its first ": " or "; ",
// without the channels that fund a move (the moves table lists them).
func shortReason(r string) string {
	r = funded.ReplaceAllString(r, "")
	cut := len(r)
	for _, sep := range []string{": ", "; "} {
		if i := strings.Index(r, sep); i >= 0 && i < cut {
			cut = i
		}
	}
	return r[:cut]
}

func (v *view) gains(d *record.Decision, gains []float64, weeks string) error {
	a := d.Risk.Approved
	if len(gains) == 0 {
		v.GainCaption = "No draws of the gain were given to this brief, so its distribution is not drawn; the figures above come from the decision record."
		return nil
	}
	if a.MovedPerWeek == 0 && slices.Min(gains) == 0 && slices.Max(gains) == 0 {
		v.GainCaption = "The approved plan moves no money, so its gain is zero under every draw; there is no distribution to draw."
		return nil
	}
	doc, err := gainChart(gains, d.Horizon, a.Downside, a.DownsideLevel, a.ExpectedGain)
	if err != nil {
		return err
	}
	losing := 0
	for _, g := range gains {
		if g < 0 {
			losing++
		}
	}
	v.GainCaption = fmt.Sprintf("Draws of the model by the approved plan's profit gain over the %s; %d of %d draws lose money (hatched bars, left of the solid break-even line). Dashed: the %s (%s); dotted: the expected gain (%s).",
		weeks, losing, len(gains), percentileName(a.DownsideLevel), signedMoney(a.Downside), signedMoney(a.ExpectedGain))
	v.GainChart, err = inlineSVG(doc, "chart-gain", "Distribution of the gain of the approved plan. "+v.GainCaption)
	return err
}

// budget lays out the budget view: what the allocator's plan would gain at
// other totals, and what the next unit of money would return there.
func (v *view) budget(points []BudgetPoint, h int) {
	if len(points) == 0 {
		return
	}
	for _, b := range points {
		if b.Error != "" {
			v.Budget = append(v.Budget, budgetRow{Change: signedPct(b.Change), Budget: "—", Weekly: "—", Gain: "no plan", Band: "—",
				Marginal: "the plan's constraints cannot all hold at this budget"})
			continue
		}
		r := budgetRow{
			Change: signedPct(b.Change), Budget: money(b.Budget), Weekly: money(b.Budget / float64(max(h, 1))),
			Gain: signedMoney(b.ExpectedGain), Band: signedMoney(b.P05) + " to " + signedMoney(b.P95),
			Marginal: "not confirmed", Current: b.Change == 0,
		}
		if b.Known {
			r.Marginal = fmt.Sprintf("%s (returns %s)", signedDecimal(b.MarginalReturn), decimal(1+b.MarginalReturn))
		}
		v.Budget = append(v.Budget, r)
	}
	v.BudgetNote = "At each total, the allocator's plan under the plan's constraints, before the policy's gate, judged on the decision's draws; the gain is profit against keeping current spend, net of any change of the total. " +
		"Net return of the next unit: the profit, after the money itself, from one more unit of weekly budget where it returns most (below zero, more budget loses money; \"not confirmed\": the allocator's optimality check failed there)."
}

func signedPct(x float64) string {
	if math.Round(x*1000) == 0 {
		return "0% (this decision's budget)"
	}
	if x > 0 {
		return "+" + pct(x)
	}
	return pct(x)
}

// decimal writes a ratio with two decimals, never in scientific notation.
func decimal(x float64) string {
	s := strconv.FormatFloat(x, 'f', 2, 64)
	if s == "-0.00" {
		s = "0.00"
	}
	return s
}

func signedDecimal(x float64) string {
	s := decimal(x)
	if !strings.HasPrefix(s, "-") && s != "0.00" {
		s = "+" + s
	}
	return s
}

func (v *view) contributions(c *Contributions, kpi string) error {
	doc, err := contributionChart(c, kpi)
	if err != nil {
		return err
	}
	n := len(c.Weeks)
	var base, total float64
	shares := make([]float64, len(c.Channels))
	for t := range n {
		base += c.Base[t]
		total += c.Base[t]
		for k := range c.Channels {
			shares[k] += c.Media[k][t]
			total += c.Media[k][t]
		}
	}
	var parts []string
	for k, name := range c.Channels {
		parts = append(parts, fmt.Sprintf("%s %s", name, pct(math.Round(shares[k]/total*1000)/1000)))
	}
	v.ContribCaption = fmt.Sprintf("The fitted weekly %s of the %s of data, stacked: the base (what the model expects without paid media: level, trend, season and controls) at the bottom, then each channel. Over the data the base is %s of the fitted %s; %s. The black line is the actual %s.",
		kpi, plural(n, "week", "weeks"), pct(math.Round(base/total*1000)/1000), kpi, strings.Join(parts, ", "), kpi)
	if v.ContribChart, err = inlineSVG(doc, "chart-contrib", "Contributions over time. "+v.ContribCaption); err != nil {
		return err
	}
	doc, err = fitChart(c, kpi)
	if err != nil {
		return err
	}
	var ss, sa, sy float64
	for t := range n {
		f := c.Base[t]
		for k := range c.Channels {
			f += c.Media[k][t]
		}
		r := c.Actual[t] - f
		ss += r * r
		sa += math.Abs(r)
		sy += math.Abs(c.Actual[t])
	}
	v.FitCaption = fmt.Sprintf("Top: the actual weekly %s (solid black) and the model's fit (dashed blue). Bottom: the residual, actual minus fitted, each week; a pattern in it (runs on one side, growing swings) is what the fit misses. Residual SD %s; the fit misses by %s of the %s on average (wMAPE).",
		kpi, approx(math.Sqrt(ss/float64(n))), pct(math.Round(sa/sy*1000)/1000), kpi)
	v.FitChart, err = inlineSVG(doc, "chart-fit", "Actual against fitted, with residuals. "+v.FitCaption)
	return err
}

func curveCaption(cb CurveBand, weeks string) string {
	point := func(what string, x float64) string {
		m, beyond := at(cb.Spend, cb.P50, x)
		lo, _ := at(cb.Spend, cb.P10, x)
		hi, _ := at(cb.Spend, cb.P90, x)
		if beyond {
			return fmt.Sprintf("%s %s a week: beyond the computed curve (shown at its end)", what, money(x))
		}
		return fmt.Sprintf("%s %s a week: %s (%s to %s)", what, money(x), approx(m), approx(lo), approx(hi))
	}
	parts := []string{point("current", cb.Current)}
	switch {
	case math.Abs(cb.Proposed-cb.Approved) <= 0.5:
		parts = append(parts, point("proposed and approved", cb.Proposed))
	case math.Abs(cb.Approved-cb.Current) <= 0.5:
		parts[0] = point("current and approved", cb.Current)
		parts = append(parts, point("proposed", cb.Proposed))
	default:
		parts = append(parts, point("proposed", cb.Proposed), point("approved", cb.Approved))
	}
	s := fmt.Sprintf("Median extra KPI value over the %s (80%% of draws): %s. Seen in the data: %s to %s a week.",
		weeks, strings.Join(parts, "; "), money(cb.SeenLow), money(cb.SeenHigh))
	if cb.Approved > cb.SeenHigh || cb.Proposed > cb.SeenHigh {
		s += " Beyond that, extrapolation."
	}
	return s
}

func holdoutCaption(h *Holdout, kpi string) string {
	n := len(h.Weeks)
	s := fmt.Sprintf("Weekly %s in the %s the model was not fitted on (%s to %s): actual (solid line, discs) against the forecast (dashed).",
		kpi, plural(n, "week", "weeks"), h.Weeks[0], h.Weeks[n-1])
	if h.Low != nil {
		in := 0
		for i := range n {
			if h.Actual[i] >= h.Low[i] && h.Actual[i] <= h.High[i] {
				in++
			}
		}
		s += fmt.Sprintf(" The actual fell inside the forecast band (shaded) in %d of %d weeks.", in, n)
	}
	return s
}

var statusRank = map[validation.Status]int{validation.Fail: 0, validation.Warn: 1, validation.Pass: 2}

// checkMeaning says in plain words what each check asks of the model.
// Checks not listed fall back to their family's meaning.
var checkMeaning = map[string]string{
	"accuracy/holdout_wmape":         "how far the forecast of weeks left out of the fit missed, as a share of the KPI",
	"accuracy/holdout_bias":          "whether the forecast of the left-out weeks leans high or low",
	"accuracy/holdout_mase":          "the left-out weeks' error against a naive forecast's",
	"accuracy/skill":                 "whether the model forecasts better than a naive forecast",
	"accuracy/backtest_median_wmape": "the typical forecast error over several rolling backtests",
	"accuracy/backtest_worst_wmape":  "the worst forecast error over several rolling backtests",
	"recovery/roi_error":             "refitted on data simulated from a known truth, how far the model lands from the true ROI",
	"recovery/roi_bias":              "refitted on simulated data, whether the model over- or under-states the ROI",
	"recovery/spend_collinearity":    "whether this channel's spend moves so closely with another's that the model cannot tell them apart",
	"stability/break_even":           "how many draws put the return of the next unit of money on the other side of break-even",
	"stability/decay_bounds":         "how much the ROI depends on the assumed limit of carryover",
	"stability/drift":                "whether the ROI changed between the first and the second half of the data by more than chance",
	"stability/roi_cv":               "how much the ROI varies across the bootstrap draws",
	"stability/quarter_out":          "how much the ROI moves when one quarter of the data is left out",
	"lift/agreement":                 "whether the model agrees with the channel's lift test",
	"reconciliation/bias":            "whether past decisions' forecasts leaned high or low against what happened",
	"reconciliation/coverage":        "whether what happened fell inside past decisions' forecast bands",
}

var familyMeaning = map[validation.Family]string{
	validation.Accuracy:       "how well the model forecasts weeks it was not fitted on",
	validation.Recovery:       "whether the model finds a known truth in simulated data",
	validation.Stability:      "whether the answer holds when the data or assumptions change a little",
	validation.Lift:           "whether the model agrees with experiments",
	validation.Reconciliation: "whether past forecasts came true",
}

// evidence lists the checks that failed or warned, with what each means;
// the passed ones are counted.
func (v *view) evidence(d *record.Decision) {
	checks := slices.Clone(d.Checks)
	slices.SortStableFunc(checks, func(a, b gate.CheckUse) int {
		ra, oka := statusRank[a.Status]
		rb, okb := statusRank[b.Status]
		if !oka {
			ra = -1 // an unknown status is shown first: someone must look at it
		}
		if !okb {
			rb = -1
		}
		return cmp.Compare(ra, rb)
	})
	count := map[validation.Status]int{}
	// One row per check and status: the channels it concerns, what it
	// asks, what was found on each, what the policy did.
	type key struct {
		name   string
		status validation.Status
	}
	rows := map[key]int{}
	for _, c := range checks {
		count[c.Status]++
		if c.Status == validation.Pass {
			continue
		}
		effect := c.Effect
		if c.WaivedBy != "" && !strings.Contains(effect, c.WaivedBy) {
			effect += " (waived by " + c.WaivedBy + ")"
		}
		scope := c.Scope
		if scope == "" || scope == validation.Global {
			scope = "all channels"
		}
		// The policy's effect names the channel; said once per row.
		effect = strings.ReplaceAll(effect, " "+scope+" ", " the channel ")
		k := key{c.Name, c.Status}
		if i, ok := rows[k]; ok {
			r := &v.Problems[i]
			if !strings.Contains(r.Scope, ", ") {
				r.Detail = r.Scope + ": " + r.Detail
			}
			r.Scope += ", " + scope
			r.Detail += "; " + scope + ": " + c.Detail
			if !strings.Contains(r.Effect, effect) {
				r.Effect += "; " + effect
			}
			continue
		}
		status := "FAILED"
		switch c.Status {
		case validation.Warn:
			status = "WARNING"
		case validation.Fail:
		default:
			status = strings.ToUpper(cmp.Or(string(c.Status), "unknown"))
		}
		meaning := checkMeaning[c.Name]
		if meaning == "" {
			meaning = cmp.Or(familyMeaning[c.Family], "a check of the model")
		}
		rows[k] = len(v.Problems)
		v.Problems = append(v.Problems, evidenceRow{
			Family: string(c.Family), Name: c.Name, Scope: scope,
			Status: status, StatusID: string(c.Status),
			Meaning: meaning, Detail: c.Detail, Effect: effect,
		})
	}
	v.EvidenceSummary = fmt.Sprintf("%s: %d failed, %d warned, %d passed (not listed).",
		plural(len(checks), "check", "checks"), count[validation.Fail], count[validation.Warn], count[validation.Pass])
	v.ChecksLine = fmt.Sprintf("Evidence: %d of %s passed; %d failed and %d warned (listed, with what each means, under The evidence).",
		count[validation.Pass], plural(len(checks), "check", "checks"), count[validation.Fail], count[validation.Warn])
	if count[validation.Fail]+count[validation.Warn] == 0 {
		v.ChecksLine = fmt.Sprintf("Evidence: all %s passed.", plural(len(checks), "check", "checks"))
	}
}

func (v *view) rerun(d *record.Decision) {
	names := make([]string, 0, len(d.Inputs))
	for k := range d.Inputs {
		names = append(names, k)
	}
	slices.Sort(names)
	for _, k := range names {
		in := d.Inputs[k]
		v.Inputs = append(v.Inputs, inputRow{Name: k, Path: in.Path, SHA256: in.SHA256})
	}
	if d.PolicySHA256 != "" && d.Inputs["policy"].SHA256 == "" {
		v.Inputs = append(v.Inputs, inputRow{Name: "policy", Path: d.Policy, SHA256: d.PolicySHA256})
	}
	tool := strings.TrimSpace(d.Tool + " " + d.Version)
	v.Rerun = []fact{
		{"Tool and version", cmp.Or(tool, "not recorded")},
		{"Seed", strconv.FormatUint(d.Seed, 10)},
		{"Record format", cmp.Or(d.Format, "not recorded")},
		{"Policy", cmp.Or(d.Policy, "not recorded")},
		{"Channels", joinAnd(d.Channels)},
		{"Last week of data", cmp.Or(d.AsOf, "not recorded")},
		{"Horizon", plural(d.Horizon, "week", "weeks")},
	}
	if d.Draws.Count > 0 {
		dr := fmt.Sprintf("%d (%d failed)", d.Draws.Count, d.Draws.Failed)
		if d.Draws.Method != "" {
			dr += ", " + d.Draws.Method
			if d.Draws.BlockLength > 0 {
				dr += fmt.Sprintf(", block length %s weeks", strconv.FormatFloat(d.Draws.BlockLength, 'g', 4, 64))
			}
		}
		v.Rerun = append(v.Rerun, fact{"Draws", dr})
	}
	if d.Proposal.Source != "" {
		src := d.Proposal.Source
		if d.Proposal.Objective != "" {
			src += " (" + d.Proposal.Objective + ")"
		}
		v.Rerun = append(v.Rerun, fact{"Proposal from", src})
	}
	if d.Search.GridSteps > 0 {
		v.Rerun = append(v.Rerun, fact{"Step search", fmt.Sprintf("grid of %d, tolerance %s", d.Search.GridSteps, strconv.FormatFloat(d.Search.Tolerance, 'g', 3, 64))})
	}
}
