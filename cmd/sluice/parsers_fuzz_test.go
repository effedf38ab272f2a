package main

import (
	"encoding/json"
	"reflect"
	"strings"
	"testing"

	"github.com/spf13/viper"

	"sluice/internal/strictyaml"
	"sluice/rehearsal"
)

// Fuzz tests of the CLI's own parsers; seed corpora in testdata/fuzz/.
// Each target runs in microseconds, so run them with a short minimisation
// time, e.g. -fuzztime 30s -fuzzminimizetime 5s (DEVELOPERS.md).

// FuzzProposalYAML: a proposal file decodes strictly or is refused with
// the file's name; what decodes names channels and weekly spend only.
func FuzzProposalYAML(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		var pf proposalFile
		err := strictyaml.Decode(data, "proposal.yaml", &pf)
		if err != nil {
			if !strings.Contains(err.Error(), "proposal.yaml") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		var again proposalFile
		if err := strictyaml.Decode(data, "proposal.yaml", &again); err != nil || !reflect.DeepEqual(pf, again) {
			t.Fatalf("decoding is not deterministic: %v", err)
		}
	})
}

// FuzzBriefData: brief.json is accepted only when its charts can be laid
// out; what is accepted survives a JSON round trip.
func FuzzBriefData(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		bd, err := parseBriefData(data, "brief.json")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "brief.json") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		for _, cb := range bd.Curves {
			if len(cb.P10) != len(cb.Spend) || len(cb.P50) != len(cb.Spend) || len(cb.P90) != len(cb.Spend) {
				t.Fatalf("accepted a curve of mismatched lengths")
			}
		}
		b, err := json.Marshal(bd)
		if err != nil {
			return // a number JSON cannot hold came through float parsing: not reachable, but not this target's concern
		}
		if _, err := parseBriefData(b, "brief.json"); err != nil {
			t.Fatalf("re-parse of an accepted brief.json: %v", err)
		}
	})
}

// FuzzRehearsalJSON: a rehearsal.json shard, however malformed, is refused
// or merged without a panic.
func FuzzRehearsalJSON(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		rf, err := decodeRehearsalFile(data)
		if err != nil {
			return
		}
		if msg := sameRehearsal(rf.rehearseOutput, rf.rehearseOutput); msg != "" {
			t.Fatalf("a rehearsal differs from itself: %s", msg)
		}
		if rf.WorldsTotal > 1<<16 || len(rf.Outcomes) > 1<<12 {
			return // sizes are bounded by the files a run writes
		}
		names := make([]string, len(rf.Policies))
		for j, p := range rf.Policies {
			names[j] = p.Name
		}
		rehearsal.Merge(rf.Seed, rf.Sizes, names, rf.WorldsTotal, 1, [][]rehearsal.Outcome{rf.Outcomes})
	})
}

// FuzzConfigFile: sluice.yaml is read or refused with its name; an
// accepted file names only flags some command knows, never a
// command-line-only switch.
func FuzzConfigFile(f *testing.F) {
	commands := newApp(nil, nil).Commands
	known := map[string]bool{}
	for _, c := range commands {
		for _, fl := range c.Flags {
			for _, n := range fl.Names() {
				known[n] = true
			}
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		v := viper.New()
		err := readConfig(v, data, commands)
		if err != nil {
			if !strings.Contains(err.Error(), configFile) {
				t.Fatalf("error does not name %s: %v", configFile, err)
			}
			return
		}
		for _, k := range v.AllKeys() {
			dash := strings.ReplaceAll(k, "_", "-")
			if !known[k] && !known[dash] {
				t.Fatalf("accepted unknown key %q", k)
			}
			if dash == "replace-signed" {
				t.Fatalf("accepted the command-line-only key %q", k)
			}
		}
	})
}
