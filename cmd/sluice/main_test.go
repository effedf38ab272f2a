package main

import (
	"bytes"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"sluice/gate"
	"sluice/internal/atomicfile"
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
		// check-set DIR: DIR is a complete decision set whose three files
		// belong to one record, or is marked incomplete; no temporary file
		// is left either way. It prints which.
		"check-set": checkSetCmd,
		// kill-trials N DIR ARGS...: runs sluice ARGS --seed 100 once to
		// time it, then N times more with seeds 101.. (so consecutive runs
		// write different records), each SIGKILLed at a moment spread over
		// that time and around its end, and checks DIR after each (see
		// check-set).
		"kill-trials": killTrialsCmd,
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

func killTrialsCmd(ts *testscript.TestScript, neg bool, args []string) {
	if len(args) < 3 {
		ts.Fatalf("usage: kill-trials N DIR ARGS...")
	}
	n, err := strconv.Atoi(args[0])
	ts.Check(err)
	var bin string
	for _, d := range filepath.SplitList(ts.Getenv("PATH")) {
		if p := filepath.Join(d, "sluice"); fileExists(p) {
			bin = p
			break
		}
	}
	if bin == "" {
		ts.Fatalf("sluice not on the script's PATH")
	}
	run := func(seed int, kill time.Duration) time.Duration {
		cmd := exec.Command(bin, append(slices.Clone(args[2:]), "--seed", strconv.Itoa(seed))...)
		cmd.Dir = ts.Getenv("WORK")
		for _, k := range []string{"PATH", "HOME", "TMPDIR"} {
			cmd.Env = append(cmd.Env, k+"="+ts.Getenv(k))
		}
		start := time.Now()
		ts.Check(cmd.Start())
		if kill > 0 {
			timer := time.AfterFunc(kill, func() { cmd.Process.Signal(syscall.SIGKILL) })
			defer timer.Stop()
		}
		cmd.Wait()
		return time.Since(start)
	}
	total := run(100, 0)
	checkSet(ts, args[1])
	killed := 0
	for i := range n {
		// Half the kills spread over the run, half around its end, where
		// the files are written.
		frac := (float64(i) + 0.5) / float64(n/2)
		if i >= n/2 {
			frac = 0.85 + 0.3*(float64(i-n/2)+0.5)/float64(n-n/2)
		}
		at := time.Duration(float64(total) * frac)
		if run(101+i, at) < total {
			killed++
		}
		checkSet(ts, args[1])
	}
	ts.Logf("%d trials over a run of %v, %d killed before they ended", n, total.Round(time.Millisecond), killed)
}

func checkSetCmd(ts *testscript.TestScript, neg bool, args []string) {
	if len(args) != 1 {
		ts.Fatalf("usage: check-set DIR")
	}
	checkSet(ts, args[0])
}

func checkSet(ts *testscript.TestScript, name string) {
	args := []string{name}
	dir := ts.MkAbs(args[0])
	entries, err := os.ReadDir(dir)
	ts.Check(err)
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			ts.Fatalf("temporary file left in %s: %s", args[0], e.Name())
		}
	}
	names := []string{"decision.json", "brief.json", "report.html"}
	if err := atomicfile.CheckSet(dir, names...); err != nil {
		if !errors.Is(err, atomicfile.ErrIncomplete) {
			ts.Fatalf("%v", err)
		}
		ts.Logf("%s: marked incomplete", args[0])
		return
	}
	rec, err := os.ReadFile(filepath.Join(dir, "decision.json"))
	ts.Check(err)
	h := record.SHA256Hex(rec)
	bd, err := os.ReadFile(filepath.Join(dir, "brief.json"))
	ts.Check(err)
	page, err := os.ReadFile(filepath.Join(dir, "report.html"))
	ts.Check(err)
	if !bytes.Contains(bd, []byte(`"record_sha256": "`+h+`"`)) {
		ts.Fatalf("%s: complete set, but brief.json belongs to another record", args[0])
	}
	if record.CheckBrief(page, "report.html", rec) != nil {
		ts.Fatalf("%s: complete set, but report.html belongs to another record", args[0])
	}
	ts.Logf("%s: complete, one record (%s)", args[0], h[:12])
}
