package report_test

import (
	"bytes"
	"fmt"
	"strings"

	"sluice/gate"
	"sluice/record"
	"sluice/report"
)

func ExampleRender() {
	// An invented, approved move of 5,000 a week from radio to search.
	d := &record.Decision{
		Format: record.DecisionFormat, KPI: "revenue", Horizon: 13, Channels: []string{"search", "radio"},
		Decision: gate.Decision{
			Verdict: gate.Approve,
			Moves: []gate.Move{
				{Channel: "search", Current: 20000, Proposed: 25000, Approved: 25000, SafeStep: 1},
				{Channel: "radio", Current: 10000, Proposed: 5000, Approved: 5000, SafeStep: 1},
			},
			Risk:             gate.Risks{Approved: gate.Risk{MovedPerWeek: 5000, MovedHorizon: 65000, ExpectedGain: 12000, DownsideLevel: 0.05, CVaRLevel: 0.05}},
			SignoffsRequired: []gate.Signoff{{Role: "finance", Explanation: "every move is signed by finance"}},
		},
		Caution: record.Caution,
	}
	var page bytes.Buffer
	if err := report.Render(&page, report.Input{Record: d, Title: "Example Co."}); err != nil {
		fmt.Println(err)
		return
	}
	s := page.String()
	for _, marker := range []string{"<h1>", `<span class="sentence">`} {
		i := strings.Index(s, marker) + len(marker)
		fmt.Println(s[i : i+strings.Index(s[i:], "<")])
	}
	fmt.Println(strings.Count(s, "<svg"), "chart")
	// Output:
	// Example Co.: paid-media budget decision
	// Approve: move 5,000 a week as proposed, 65,000 over the 13 weeks.
	// 1 chart
}
