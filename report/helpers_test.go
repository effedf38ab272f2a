package report_test

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"sluice/gate"
	"sluice/policies"
	"sluice/record"
	"sluice/report"
	"sluice/validation"
)

// The decision below is TEST DATA: invented channels and figures, shaped
// like a downsized decision, so that every part of the brief has something
// to show. None of it is a model's output.

// Invented moves (weekly spend). The proposal moves 61,000 a week (cuts
// 20,000 + 30,000 + 11,000 funding increases 25,000 + 36,000); the approved
// plan moves 38,000 (12,000 + 19,000 + 7,000 against 18,000 + 20,000).
var testMoves = []struct {
	name                        string
	current, proposed, approved float64
}{
	{"search", 60000, 40000, 48000},
	{"social", 30000, 55000, 48000},
	{"tv", 90000, 60000, 71000},
	{"online video", 25000, 61000, 45000},
	{"radio", 15000, 4000, 8000},
	{`print & "outdoor" <OOH>`, 10000, 10000, 10000},
}

const (
	testHorizon  = 13
	testProposed = 61000.0
	testApproved = 38000.0
	// testSentence is the verdict the brief must write for the test data:
	// the figures above and the first reason of testRecord.
	testSentence = "Downsize: move 38,000 EUR a week of the 61,000 proposed. " +
		"Held back: search, social, tv, online video and radio move part of the way. " +
		"The approved plan is also scaled down because the proposal as a whole has a 23% chance of losing money (the policy allows 10%)."
	// testScriptDetail is a check detail that tries to inject markup.
	testScriptDetail = `bias <script>alert("x")</script> in weeks 3 & 4`
)

func fakeHash(s string) string {
	h := sha256.Sum256([]byte("test data: " + s))
	return hex.EncodeToString(h[:])
}

func testRecord() *record.Decision {
	names := make([]string, len(testMoves))
	moves := make([]gate.Move, len(testMoves))
	plan := make([]float64, len(testMoves))
	for k, m := range testMoves {
		names[k] = m.name
		step := 1.0
		if m.proposed != m.current {
			step = (m.approved - m.current) / (m.proposed - m.current)
		}
		moves[k] = gate.Move{Channel: m.name, Current: m.current, Proposed: m.proposed, Approved: m.approved,
			SafeStep: step, SafeStepPerWeek: step * (m.proposed - m.current), Reasons: []string{}}
		plan[k] = m.approved
	}
	moves[3].Reasons = []string{
		"check lift_agreement (lift) failed: the lift test found half the modelled effect; the policy holds online video within ±20% of current spend (20,000 to 30,000/week for online video)",
		"moving more than 20,000/week into online video (funded from search, tv and radio) has a 14% chance of losing money (the policy allows 10%); at most 20,000/week meets the policy",
	}
	moves[1].Reasons = []string{"moving more than 18,000/week into social (funded from search, tv and radio) loses 9,100 over the 13 weeks at its 5th percentile (the policy accepts a loss of at most 5,000 there); at most 18,000/week meets the policy"}
	for _, k := range []int{0, 2, 4} {
		m := testMoves[k]
		moves[k].Reasons = []string{fmt.Sprintf("reduced from a change of %.0f,000/week to %.0f,000/week: cuts are held to what the increases that pass need, so the total budget stays as proposed",
			(m.current-m.proposed)/1000, (m.current-m.approved)/1000)}
	}
	inputs := map[string]record.Input{}
	for _, n := range []string{"data", "spec", "plan", "policy", "draws"} {
		inputs[n] = record.Input{Path: "q3/" + n + ".file", SHA256: fakeHash(n)}
	}
	check := func(name string, fam validation.Family, scope string, st validation.Status, metric, thr float64, detail string, act policies.Action, effect string) gate.CheckUse {
		return gate.CheckUse{Check: validation.Check{Name: name, Family: fam, Scope: scope, Status: st, Metric: metric, Threshold: thr, Detail: detail}, Action: act, Effect: effect}
	}
	band := make([]float64, testHorizon)
	for i := range band {
		band[i] = 400000 + 1000*float64(i)
	}
	return &record.Decision{
		Format: record.DecisionFormat, Tool: "sluice", Version: "test-0.0.0", Seed: 20260101, KPI: "revenue",
		AsOf: "2025-12-29", Channels: names, Horizon: testHorizon, Inputs: inputs, PolicySHA256: fakeHash("policy"),
		Draws:    record.DrawsInfo{Count: 1000, Failed: 2, Method: "moving block bootstrap", BlockLength: 8},
		Evidence: map[string]int{"pass": 3, "warn": 2, "fail": 1},
		Proposal: record.Proposal{Source: "allocator", Objective: "expected value", ExpectedGain: 150000},
		Decision: gate.Decision{
			Verdict: gate.Downsize,
			Reasons: []string{
				"the proposal as a whole has a 23% chance of losing money (the policy allows 10%)",
				"check holdout_mape (accuracy) warned: holdout error above target; warning only",
			},
			Policy: "test-conservative",
			Moves:  moves,
			Risk: gate.Risks{
				Proposed: gate.Risk{PLoss: 0.23, Downside: -61000, DownsideLevel: 0.05, CVaR: -90000, CVaRLevel: 0.05,
					ExpectedGain: 150000, P05: -61000, P50: 140000, P95: 380000, MovedPerWeek: testProposed, MovedHorizon: testProposed * testHorizon},
				Approved: gate.Risk{PLoss: 0.072, Downside: -4800, DownsideLevel: 0.05, CVaR: -21000, CVaRLevel: 0.05,
					ExpectedGain: 90000, P05: -4800, P50: 88000, P95: 190000, MovedPerWeek: testApproved, MovedHorizon: testApproved * testHorizon},
			},
			Checks: []gate.CheckUse{
				check("recovery_coverage", validation.Recovery, validation.Global, validation.Pass, 0.91, 0.8, "simulated truths fall in the 90% band 91% of the time", "", "passed"),
				check("holdout_mape", validation.Accuracy, validation.Global, validation.Warn, 0.142, 0.12, "holdout error above target", policies.Warn, "warning only"),
				check("lift_agreement", validation.Lift, "online video", validation.Fail, 2.9, 2, "the lift test found half the modelled effect", policies.Cap, "holds online video within ±20% of current spend"),
				check("stability_beta", validation.Stability, "tv", validation.Pass, 0.18, 0.3, "coefficient moves little when a year is dropped", "", "passed"),
				check("residual_bias", validation.Accuracy, validation.Global, validation.Warn, 0.031, 0.02, testScriptDetail, policies.Warn, "warning only"),
				check("past_forecast", validation.Reconciliation, validation.Global, validation.Pass, 1, 0.5, "last quarter's actual was inside its band", "", "passed"),
			},
			Waivers:          []gate.WaiverUse{},
			SignoffsRequired: []gate.Signoff{{Role: "finance", Rule: "moves_over_budget_share", Explanation: "the plan moves more than 5% of the weekly budget"}, {Role: "cmo", Rule: "evidence_capped", Explanation: "a failed check capped a channel"}},
			ApprovedPlan:     plan,
			PlanScale:        0.92,
			Search:           gate.Search{GridSteps: 10, Tolerance: 1e-4},
		},
		Forecast: validation.Forecast{Start: "2026-01-05", Weeks: testHorizon, Plan: map[string]float64{},
			Band: validation.Band{P05: band, P50: band, P95: band}},
		ForecastTotal: [3]float64{5100000, 5300000, 5500000},
		Caution:       record.Caution,
	}
}

// testCurve is an invented Hill-shaped response, 13 weeks of it, with a
// band ±20% around the median.
func testCurve(name string, current, proposed, approved float64) report.CurveBand {
	const n = 41
	top := 2.2 * max(current, proposed, 20000)
	cb := report.CurveBand{Channel: name, Current: current, Proposed: proposed, Approved: approved,
		SeenLow: 0.6 * current, SeenHigh: 1.3 * current}
	kappa, beta := 1.1*current+5000, 9.0*current+40000
	for i := range n {
		w := top * float64(i) / (n - 1)
		r := beta * w * w / (w*w + kappa*kappa)
		cb.Spend = append(cb.Spend, w)
		cb.P50 = append(cb.P50, r)
		cb.P10 = append(cb.P10, 0.8*r)
		cb.P90 = append(cb.P90, 1.2*r)
	}
	return cb
}

// Invented contributions: 26 weeks, a base of 300,000 with a seasonal
// swing, two channels; the actual is their sum plus a fixed residual
// pattern (+5,000, -5,000, 0 in turn), so the residual SD is known in
// closed form: sqrt(2/3)·5,000 = 4,082.48.
func testContributions() *report.Contributions {
	c := &report.Contributions{Channels: []string{"search", "tv"}, Media: [][]float64{nil, nil}}
	day := time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)
	resid := []float64{5000, -5000, 0}
	for t := range 26 {
		base := 300000 + 20000*math.Sin(float64(t)/4)
		s, tv := 40000.0+float64(t)*100, 60000.0
		c.Weeks = append(c.Weeks, day.AddDate(0, 0, 7*t).Format("2006-01-02"))
		c.Base = append(c.Base, base)
		c.Media[0] = append(c.Media[0], s)
		c.Media[1] = append(c.Media[1], tv)
		c.Actual = append(c.Actual, base+s+tv+resid[t%3])
	}
	return c
}

// testBudget is an invented budget view: at +10% no plan is possible.
func testBudget() []report.BudgetPoint {
	return []report.BudgetPoint{
		{Change: -0.1, Budget: 2_700_000, ExpectedGain: 60000, P05: -20000, P95: 140000, MarginalReturn: 0.42, Known: true},
		{Change: -0.05, Budget: 2_850_000, ExpectedGain: 80000, P05: -9000, P95: 170000, MarginalReturn: 0.31, Known: true},
		{Change: 0, Budget: 3_000_000, ExpectedGain: 150000, P05: -61000, P95: 380000, MarginalReturn: 0.18, Known: true},
		{Change: 0.05, Budget: 3_150_000, ExpectedGain: 140000, P05: -70000, P95: 390000, MarginalReturn: -0.06, Known: false},
		{Change: 0.1, Error: "the plan's constraints cannot all hold"},
	}
}

// testInput is the full brief input over the invented decision.
func testInput() report.Input {
	in := report.Input{Record: testRecord(), Signed: []string{"finance"}, Title: "Test Co. (test data)",
		Money:         &report.Money{Currency: "EUR", Margin: 0.65, ValuePerKPI: 1},
		Signatures:    []report.Signature{{Role: "finance", KeyID: "0123456789abcdef", Signer: "finance_partner", SignedAt: "2026-01-02 09:30:00"}},
		Contributions: testContributions(), Budget: testBudget()}
	for _, m := range testMoves {
		in.Curves = append(in.Curves, testCurve(m.name, m.current, m.proposed, m.approved))
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 1000 {
		in.Gains = append(in.Gains, 90000+60000*rng.NormFloat64())
	}
	h := &report.Holdout{}
	day := time.Date(2025, 10, 6, 0, 0, 0, 0, time.UTC)
	for i := range testHorizon {
		f := 410000 + 20000*math.Sin(float64(i)/2)
		h.Weeks = append(h.Weeks, day.AddDate(0, 0, 7*i).Format("2006-01-02"))
		h.Forecast = append(h.Forecast, f)
		h.Low = append(h.Low, f-30000)
		h.High = append(h.High, f+30000)
		h.Actual = append(h.Actual, f+25000*rng.NormFloat64())
	}
	in.Holdout = h
	return in
}
