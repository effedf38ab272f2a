package main

import (
	"bytes"
	"os"
	"regexp"
	"testing"
	"time"

	"sluice/gate"
	"sluice/record"

	"github.com/rogpeppe/go-internal/testscript"
)

func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){
		"sluice": func() { os.Exit(run(os.Args, os.Stdout, os.Stderr)) },
	})
}

// TestScripts runs the end-to-end scripts in testdata/script, named by
// subcommand first.
func TestScripts(t *testing.T) {
	testscript.Run(t, testscript.Params{Dir: "testdata/script", Cmds: map[string]func(*testscript.TestScript, bool, []string){
		// demo-tamper changes one digit of a file: the first "seed" value.
		// forge-record rewrites a record as a forger with sluice's own code
		// would, keeping the form sluice writes (see forgeRecord).
		"forge-record": forgeRecordCmd,
		// sign-at signs a record at a given time ("none": no time), as an
		// older sluice or a backdating signer would.
		"sign-at": signAtCmd,
		// sleep DURATION: signing times are whole seconds.
		"sleep": func(ts *testscript.TestScript, neg bool, args []string) {
			if len(args) != 1 {
				ts.Fatalf("usage: sleep DURATION")
			}
			d, err := time.ParseDuration(args[0])
			ts.Check(err)
			time.Sleep(d)
		},
		// forge-draws FILE sets the first Hill shape of the first replicate
		// (line 2) to -50.
		"forge-draws": func(ts *testscript.TestScript, neg bool, args []string) {
			if len(args) != 1 {
				ts.Fatalf("usage: forge-draws FILE")
			}
			path := ts.MkAbs(args[0])
			b, err := os.ReadFile(path)
			ts.Check(err)
			nl := bytes.IndexByte(b, '\n') + 1
			re := regexp.MustCompile(`"shape":[0-9.eE+-]+`)
			loc := re.FindIndex(b[nl:])
			if loc == nil {
				ts.Fatalf("no shape on line 2 of %s", args[0])
			}
			out := append(append(append([]byte{}, b[:nl+loc[0]]...), `"shape":-50`...), b[nl+loc[1]:]...)
			ts.Check(os.WriteFile(path, out, 0o644))
		},
		// replace-text FILE OLD NEW replaces the first OLD in FILE.
		"replace-text": func(ts *testscript.TestScript, neg bool, args []string) {
			if len(args) != 3 {
				ts.Fatalf("usage: replace-text FILE OLD NEW")
			}
			path := ts.MkAbs(args[0])
			b, err := os.ReadFile(path)
			ts.Check(err)
			if !bytes.Contains(b, []byte(args[1])) {
				ts.Fatalf("%s holds no %q", args[0], args[1])
			}
			ts.Check(os.WriteFile(path, bytes.Replace(b, []byte(args[1]), []byte(args[2]), 1), 0o644))
		},
		"demo-tamper": func(ts *testscript.TestScript, neg bool, args []string) {
			if len(args) != 1 {
				ts.Fatalf("usage: demo-tamper FILE")
			}
			path := ts.MkAbs(args[0])
			b, err := os.ReadFile(path)
			ts.Check(err)
			i := bytes.Index(b, []byte(`"seed": `))
			if i < 0 {
				ts.Fatalf("no seed in %s", path)
			}
			j := i + len(`"seed": `)
			b[j] = '0' + (b[j]-'0'+1)%10
			ts.Check(os.WriteFile(path, b, 0o644))
		},
	}})
}

// forgeRecordCmd: forge-record FILE KIND, KIND one of
//
//	no-signoffs   the list of required sign-offs emptied, the verdict set
//	              to approve and every approved spend to the proposed one;
//	lead-only     only marketing_lead kept in the list, the plan raised to
//	              the proposal;
//	verdict-case  a second, upper-case "VERDICT": "approve" key added
//	              before "verdict".
func forgeRecordCmd(ts *testscript.TestScript, neg bool, args []string) {
	if len(args) != 2 {
		ts.Fatalf("usage: forge-record FILE KIND")
	}
	path := ts.MkAbs(args[0])
	b, err := os.ReadFile(path)
	ts.Check(err)
	d, err := record.ParseDecision(b, path)
	ts.Check(err)
	raise := func() {
		d.Verdict = gate.Approve
		for k := range d.Moves {
			d.Moves[k].Approved = d.Moves[k].Proposed
			d.ApprovedPlan[k] = d.Moves[k].Proposed
		}
	}
	switch args[1] {
	case "no-signoffs":
		raise()
		d.SignoffsRequired = []gate.Signoff{}
	case "lead-only":
		raise()
		var keep []gate.Signoff
		for _, s := range d.SignoffsRequired {
			if s.Role == "marketing_lead" {
				keep = append(keep, s)
			}
		}
		d.SignoffsRequired = keep
	case "verdict-case":
		i := bytes.Index(b, []byte(`  "verdict": `))
		if i < 0 {
			ts.Fatalf("no verdict in %s", path)
		}
		b = append(b[:i:i], append([]byte(`  "VERDICT": "approve",`+"\n"), b[i:]...)...)
		ts.Check(os.WriteFile(path, b, 0o644))
		return
	default:
		ts.Fatalf("unknown forgery %q", args[1])
	}
	out, err := record.MarshalDecision(d)
	ts.Check(err)
	ts.Check(os.WriteFile(path, out, 0o644))
}

// signAtCmd: sign-at RECORD KEY ROLE TIME
func signAtCmd(ts *testscript.TestScript, neg bool, args []string) {
	if len(args) != 4 {
		ts.Fatalf("usage: sign-at RECORD KEY ROLE TIME|none")
	}
	path := ts.MkAbs(args[0])
	body, err := os.ReadFile(path)
	ts.Check(err)
	key, _, err := record.LoadPrivateKey(ts.MkAbs(args[1]))
	ts.Check(err)
	var at time.Time
	if args[3] != "none" {
		at, err = time.Parse(time.RFC3339, args[3])
		ts.Check(err)
	}
	s, err := record.SignAt(body, key, args[2], nil, at)
	ts.Check(err)
	ts.Check(record.AppendSignoff(path, s))
}
