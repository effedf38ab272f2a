package main

import (
	"fmt"
	"strings"

	"github.com/urfave/cli/v2"
)

// demoModel is the model flags of the demo company (sluice demo writes its
// files into sluice-demo/), so that every example below runs as written
// after `sluice demo`.
const demoModel = "--data sluice-demo/weekly.csv --kpi revenue --channels search,social,tv,online_video,display,audio --controls price_index,promo"

// examples are one or two real invocations per command, shown under
// EXAMPLES in its --help. TestExamplesUseKnownFlags checks that every flag
// they use is one of the command's own, under its current spelling.
var commandExamples = map[string][]string{
	"fit": {
		"# fit the response model and print the per-channel table",
		"sluice fit " + demoModel,
		"# the same, as JSON for a script",
		"sluice fit " + demoModel + " --json",
	},
	"simulate": {
		"# draw a synthetic panel from a known truth into sim/",
		"sluice simulate --truth sluice-demo/truth.yaml --dir sim",
	},
	"demo": {
		"# the whole job on the invented example company, into sluice-demo/",
		"sluice demo --dir sluice-demo",
	},
	"bootstrap": {
		"# 1,000 bootstrap refits into a draws file",
		"sluice bootstrap " + demoModel + " --bootstrap-draws 1000 --seed 7 --out draws.jsonl",
		"# the second of four shards of the same run (combine with sluice merge)",
		"sluice bootstrap " + demoModel + " --bootstrap-draws 1000 --seed 7 --shard 2/4 --out part-2.jsonl",
	},
	"merge": {
		"# combine shards into exactly the file of one run",
		"sluice merge --out draws.jsonl part-1.jsonl part-2.jsonl part-3.jsonl part-4.jsonl",
	},
	"curves": {
		"# ROI and marginal-ROI bands per channel",
		"sluice curves " + demoModel + " --draws draws.jsonl",
		"# response-curve bands as CSV for a spreadsheet",
		"sluice curves " + demoModel + " --draws draws.jsonl --out bands.csv",
	},
	"validate": {
		"# the evidence, with lift tests",
		"sluice validate " + demoModel + " --draws draws.jsonl --lifts sluice-demo/lifts.csv",
		"# exit non-zero when a check fails (for a pipeline)",
		"sluice validate " + demoModel + " --draws draws.jsonl --strict",
	},
	"allocate": {
		"# next quarter's weekly spend per channel under the plan",
		"sluice allocate " + demoModel + " --plan sluice-demo/plan.yaml --draws draws.jsonl",
	},
	"propose": {
		"# the decision: record, brief and CSV files in q1/",
		"sluice propose " + demoModel + " --plan sluice-demo/plan.yaml --policy standard --draws draws.jsonl --lifts sluice-demo/lifts.csv --dir q1",
		"# gate a plan a person wrote instead of the allocator's",
		"sluice propose " + demoModel + " --plan sluice-demo/plan.yaml --proposal my-plan.yaml --dir q1-mine",
	},
	"rehearse": {
		"# how conservative is each policy? 200 simulated worlds",
		"sluice rehearse " + demoModel + " --plan sluice-demo/plan.yaml --policy standard --policy cautious --worlds 200 --seed 5 --dir rehearsal",
	},
	"rehearse-merge": {
		"# combine rehearsal shards into exactly the result of one run",
		"sluice rehearse-merge --dir rehearsal part1/rehearsal.json part2/rehearsal.json",
	},
	"verify": {
		"# intact, signed by every required role, made from this data?",
		"sluice verify --record q1/decision.json --policy sluice-demo/policy.yaml --data sluice-demo/weekly.csv",
	},
	"report": {
		"# the brief again, showing who has signed",
		"sluice report --record q1/decision.json --policy sluice-demo/policy.yaml",
	},
	"keygen": {
		"# an ed25519 key pair: keys/alice.key (private, mode 0600) and keys/alice.pub",
		"sluice keygen --prefix keys/alice",
	},
	"sign": {
		"# sign the decision as the finance partner",
		"sluice sign --record q1/decision.json --key keys/alice.key --role finance_partner",
		"# sign and waive a failed check, with the reason",
		"sluice sign --record q1/decision.json --key keys/alice.key --role finance_partner --waive stability/drift --reason \"known price change in week 80\"",
	},
}

// addExamples puts each command's examples under EXAMPLES in its help.
func addExamples(cmds []*cli.Command) {
	for _, c := range cmds {
		ex, ok := commandExamples[c.Name]
		if !ok {
			continue
		}
		var b strings.Builder
		for _, line := range ex {
			fmt.Fprintf(&b, "   %s\n", line)
		}
		c.CustomHelpTemplate = cli.CommandHelpTemplate + "\nEXAMPLES:\n" + strings.ReplaceAll(b.String(), "{{", "{ {")
	}
}
