package report

import (
	"cmp"
	"fmt"
	"html/template"
	"math"
	"slices"
	"strconv"
	"strings"

	"sluice/gate"
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
	Verdict    string // APPROVED, APPROVED IN PART, REFUSED
	VerdictID  string // approve, downsize, refuse
	Sentence   string
	Reasons    []string
	Figures    []figure
	RiskRows   []riskRow
	Forecast   string

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

	Curves []curveView

	HoldoutChart   template.HTML
	HoldoutCaption string

	Evidence        []evidenceRow
	EvidenceSummary string

	Inputs []inputRow
	Rerun  []fact
}

type figure struct{ Label, Value, Note string }

type riskRow struct{ Label, Proposed, Approved string }

type signRow struct {
	Role, Rule, Why string
	Signed          bool
}

type waiverRow struct {
	Check, Role, Reason string
	Accepted            bool
}

type moveRow struct {
	Channel                               string
	Current, Proposed, ChangeProposed     string
	Approved, ChangeApproved, ShareOfMove string
	Held                                  bool // approved differs from proposed
}

type cappedMove struct {
	Channel string
	Step    string
	Reasons []string
}

type curveView struct {
	Channel string
	Chart   template.HTML
	Caption string
}

type evidenceRow struct {
	Family, Name, Scope, Status, StatusID string
	Metric, Threshold, Detail, Effect     string
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

	v.verdict(d, weeks)
	v.figures(d, weeks)
	v.SignWhat = fmt.Sprintf("%s a week moved between channels, %s over the %s", money(d.Risk.Approved.MovedPerWeek), money(d.Risk.Approved.MovedHorizon), weeks)
	if d.Verdict == gate.Refuse {
		v.SignWhat = "no money moves; every channel keeps its current spend"
	}
	v.signoffs(d, in.Signed)
	if err := v.moves(d); err != nil {
		return nil, err
	}
	if err := v.gains(d, in.Gains, weeks); err != nil {
		return nil, err
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

// verdict writes the decision in one sentence, and the reasons about the
// decision as a whole that the sentence does not already give.
func (v *view) verdict(d *record.Decision, weeks string) {
	prop, appr := d.Risk.Proposed, d.Risk.Approved
	v.VerdictID = string(d.Verdict)
	why := ""
	switch d.Verdict {
	case gate.Approve:
		v.Verdict = "APPROVED"
		v.Sentence = fmt.Sprintf("Approved: move %s a week as proposed, %s over the %s.",
			money(appr.MovedPerWeek), money(appr.MovedHorizon), weeks)
	case gate.Downsize:
		v.Verdict = "APPROVED IN PART"
		why = heldBackReason(d)
		v.Sentence = fmt.Sprintf("Approved in part: move %s a week of the %s proposed; the rest is held back because %s.",
			money(appr.MovedPerWeek), money(prop.MovedPerWeek), sentenceEnd(why))
	default:
		v.Verdict = "REFUSED"
		why = "the policy does not approve it"
		if len(d.Reasons) > 0 {
			why = d.Reasons[0]
		}
		if prop.MovedPerWeek == 0 {
			v.Sentence = "Refused: " + sentenceEnd(why) + "."
		} else {
			v.Sentence = fmt.Sprintf("Refused: none of the %s a week proposed is moved, because %s.",
				money(prop.MovedPerWeek), sentenceEnd(why))
		}
	}
	for _, r := range d.Reasons {
		if r != why {
			v.Reasons = append(v.Reasons, r)
		}
	}
}

// heldBackReason picks the reason a downsized decision gives first: the
// risk of the proposal as a whole if the gate gave one, else the first
// reason of the move held back the most.
func heldBackReason(d *record.Decision) string {
	for _, r := range d.Reasons {
		if strings.HasPrefix(r, "the proposal as a whole") || strings.HasPrefix(r, "together the channels") {
			return r
		}
	}
	best, most := "", 0.0
	for _, m := range d.Moves {
		if held := math.Abs(m.Proposed - m.Approved); held > most && len(m.Reasons) > 0 {
			best, most = m.Reasons[0], held
		}
	}
	if best == "" {
		return "the policy approves no more"
	}
	return best
}

// sentenceEnd drops a final period, so a reason can close a sentence.
func sentenceEnd(s string) string { return strings.TrimRight(strings.TrimSpace(s), ".") }

func (v *view) figures(d *record.Decision, weeks string) {
	a, p := d.Risk.Approved, d.Risk.Proposed
	v.Figures = []figure{
		{"Money moved", money(a.MovedPerWeek) + " a week", money(a.MovedHorizon) + " over the " + weeks},
		{"Expected gain", signedMoney(a.ExpectedGain), fmt.Sprintf("over the %s; 90%% of draws between %s and %s", weeks, money(a.P05), money(a.P95))},
		{"Chance of a loss", pct(a.PLoss), "share of draws in which the approved plan loses money"},
		{"Downside", money(a.Downside), fmt.Sprintf("gain at the %s; the worst %s of draws average %s", percentileName(a.DownsideLevel), pct(a.CVaRLevel), money(a.CVaR))},
	}
	row := func(label string, f func(r gate.Risk) string) riskRow {
		return riskRow{label, f(p), f(a)}
	}
	v.RiskRows = []riskRow{
		row("Money moved a week", func(r gate.Risk) string { return money(r.MovedPerWeek) }),
		row("Money moved over the "+weeks, func(r gate.Risk) string { return money(r.MovedHorizon) }),
		row("Expected gain", func(r gate.Risk) string { return signedMoney(r.ExpectedGain) }),
		row("Median gain", func(r gate.Risk) string { return signedMoney(r.P50) }),
		row("Gain at the 5th percentile", func(r gate.Risk) string { return signedMoney(r.P05) }),
		row("Gain at the 95th percentile", func(r gate.Risk) string { return signedMoney(r.P95) }),
		row("Chance of a loss", func(r gate.Risk) string { return pct(r.PLoss) }),
		row("Downside: gain at the "+percentileName(a.DownsideLevel), func(r gate.Risk) string { return signedMoney(r.Downside) }),
		row("Average gain of the worst "+pct(a.CVaRLevel)+" (CVaR)", func(r gate.Risk) string { return signedMoney(r.CVaR) }),
	}
	if f := d.Forecast; f.Weeks > 0 {
		from := ""
		if f.Start != "" {
			from = " from the week of " + f.Start
		}
		v.Forecast = fmt.Sprintf("Under the approved plan the model expects %s of %s over the %s%s (90%% band %s to %s). Next quarter's reconciliation compares this with what happens.",
			money(d.ForecastTotal[1]), cmp.Or(d.KPI, "KPI"), plural(f.Weeks, "week", "weeks"), from, money(d.ForecastTotal[0]), money(d.ForecastTotal[2]))
	}
}

func (v *view) signoffs(d *record.Decision, signed []string) {
	need := 0
	var missing []string
	for _, s := range d.SignoffsRequired {
		ok := slices.Contains(signed, s.Role)
		v.Signoffs = append(v.Signoffs, signRow{Role: s.Role, Rule: s.Rule, Why: s.Explanation, Signed: ok})
		need++
		if !ok {
			missing = append(missing, s.Role)
		}
	}
	var extra []string
	for _, r := range signed {
		if !slices.ContainsFunc(d.SignoffsRequired, func(s gate.Signoff) bool { return s.Role == r }) && !slices.Contains(extra, r) {
			extra = append(extra, r)
		}
	}
	v.AlsoSigned = joinAnd(extra)
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
		row := moveRow{
			Channel: m.Channel, Current: money(m.Current), Proposed: money(m.Proposed),
			ChangeProposed: signedMoney(m.Proposed - m.Current),
			Approved:       money(m.Approved), ChangeApproved: signedMoney(m.Approved - m.Current),
			ShareOfMove: "—",
			Held:        math.Abs(m.Approved-m.Proposed) > 0.5,
		}
		if dprop := m.Proposed - m.Current; math.Abs(dprop) > 0.5 {
			row.ShareOfMove = pct(math.Round((m.Approved-m.Current)/dprop*1000) / 1000)
		}
		v.Moves = append(v.Moves, row)
		cur, prop, appr = cur+m.Current, prop+m.Proposed, appr+m.Approved
		dp, da = dp+m.Proposed-m.Current, da+m.Approved-m.Current
		names = append(names, m.Channel)
		cs, ps, as = append(cs, m.Current), append(ps, m.Proposed), append(as, m.Approved)
		if len(m.Reasons) > 0 {
			c := cappedMove{Channel: m.Channel, Reasons: m.Reasons}
			if d.Verdict == gate.Downsize && m.SafeStep < 1 && m.Proposed != m.Current {
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
	v.GainCaption = fmt.Sprintf("Each bar counts the draws of the model whose gain over the %s, under the approved plan, falls in its range; %d of %d draws lose money (hatched, left of the solid break-even line). The dashed line is the %s (%s), the dotted line the expected gain (%s).",
		weeks, losing, len(gains), percentileName(a.DownsideLevel), money(a.Downside), signedMoney(a.ExpectedGain))
	v.GainChart, err = inlineSVG(doc, "chart-gain", "Distribution of the gain of the approved plan. "+v.GainCaption)
	return err
}

func curveCaption(cb CurveBand, weeks string) string {
	point := func(what string, x float64) string {
		m, beyond := at(cb.Spend, cb.P50, x)
		lo, _ := at(cb.Spend, cb.P10, x)
		hi, _ := at(cb.Spend, cb.P90, x)
		s := fmt.Sprintf("at the %s %s a week the median response is %s (80%% of draws: %s to %s)", what, money(x), approx(m), approx(lo), approx(hi))
		if beyond {
			s = fmt.Sprintf("the %s %s a week lies beyond the computed curve (shown at its end)", what, money(x))
		}
		return s
	}
	parts := []string{point("current", cb.Current), point("proposed", cb.Proposed), point("approved", cb.Approved)}
	s := fmt.Sprintf("Extra KPI value over the %s for each level of weekly spend: %s. ", weeks, strings.Join(parts, "; "))
	s += fmt.Sprintf("The data has seen 4-week average spend from %s to %s a week (hatched).", money(cb.SeenLow), money(cb.SeenHigh))
	if cb.Approved > cb.SeenHigh || cb.Proposed > cb.SeenHigh {
		s += " Spend beyond that range rests on the model's extrapolation."
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
	for _, c := range checks {
		count[c.Status]++
		effect := c.Effect
		if c.WaivedBy != "" && !strings.Contains(effect, c.WaivedBy) {
			effect += " (waived by " + c.WaivedBy + ")"
		}
		v.Evidence = append(v.Evidence, evidenceRow{
			Family: string(c.Family), Name: c.Name, Scope: cmp.Or(c.Scope, validation.Global),
			Status: strings.ToUpper(cmp.Or(string(c.Status), "unknown")), StatusID: string(c.Status),
			Metric: number(c.Metric), Threshold: number(c.Threshold), Detail: c.Detail, Effect: effect,
		})
	}
	v.EvidenceSummary = fmt.Sprintf("%s: %d failed, %d warned, %d passed.",
		plural(len(checks), "check", "checks"), count[validation.Fail], count[validation.Warn], count[validation.Pass])
}

// number formats a check's metric or threshold: four significant digits,
// thousands separated from 10,000 up.
func number(x float64) string {
	if math.IsNaN(x) {
		return "n/a"
	}
	if math.Abs(x) >= 1e4 && !math.IsInf(x, 0) {
		return money(x)
	}
	return strconv.FormatFloat(x, 'g', 4, 64)
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
