package uncertainty

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sluice/model"
)

// tinyDraws is a hand-made run of 3 replicates (one failed) of a
// one-channel model, shard k of n.
func tinyDraws(k, n int) *Draws {
	spec := model.NewSpec([]string{"search"}, nil)
	spec.Harm = 0
	mi := specInfo(spec)
	mi.Weeks = 60
	mi.Channels[0].MeanSpend = 1000
	p := func(beta float64) *model.Params {
		return &model.Params{Channels: []model.ChannelParams{{Decay: 0.3, HalfSat: 1.1, Shape: 1.5, Beta: beta}}, Fixed: []float64{100, 2.5}}
	}
	d := &Draws{Source: "tiny.jsonl", Header: Header{Format: 1, ToolVersion: "test", Seed: 9, Method: MovingBlock,
		BlockLength: 2.5, BlockLengthAuto: true, Draws: 3, Shard: Shard{K: k, N: n}.String(),
		Inputs: Inputs{DataSHA256: strings.Repeat("ab", 32)}, Model: mi,
		FullFit: FullFit{Params: *p(5000), SSE: 12.5, Status: "converged"}}}
	all := []Replicate{
		{Index: 0, Params: p(4900.25), SSE: 11, Attempts: 1},
		{Index: 1, Failed: true, Reason: "warm refit: no further progress"},
		{Index: 2, Params: p(1e-7), SSE: 0.125, Attempts: 3},
	}
	sh := Shard{K: k, N: n}
	for _, r := range all {
		if sh.Has(r.Index) {
			d.Replicates = append(d.Replicates, r)
		}
	}
	return d
}

func encode(t testing.TB, d *Draws) []byte {
	t.Helper()
	var b bytes.Buffer
	if _, err := d.WriteTo(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// The format of DRAWS.md, byte for byte: field order, failed-line shape,
// shortest round-trip floats (1e-07 as encoding/json writes it).
func TestDrawsFormat(t *testing.T) {
	raw := encode(t, tinyDraws(1, 1))
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	want := []string{
		`{"sluice_draws":1,"tool_version":"test","seed":9,"method":"block","block_length":2.5,"block_length_auto":true,"draws":3,"shard":"1/1","inputs":{"data_sha256":"` + strings.Repeat("ab", 32) + `","spec_sha256":""},"model":{"weeks":60,"channels":[{"name":"search","adstock":"geometric","saturation":"hill","decay":[0,0.85],"half_saturation":[0.05,10],"shape":[1,3],"mean_spend":1000}],"controls":[],"fixed":["intercept","trend"],"period_weeks":52.18,"horizon_weeks":13,"starts":6},"full_fit":{"params":{"channels":[{"decay":0.3,"half_saturation":1.1,"shape":1.5,"beta":5000}],"fixed":[100,2.5]},"sse":12.5,"status":"converged"}}`,
		`{"index":0,"params":{"channels":[{"decay":0.3,"half_saturation":1.1,"shape":1.5,"beta":4900.25}],"fixed":[100,2.5]},"sse":11,"attempts":1,"failed":false}`,
		`{"index":1,"failed":true,"reason":"warm refit: no further progress"}`,
		`{"index":2,"params":{"channels":[{"decay":0.3,"half_saturation":1.1,"shape":1.5,"beta":1e-7}],"fixed":[100,2.5]},"sse":0.125,"attempts":3,"failed":false}`,
	}
	if len(lines) != len(want) {
		t.Fatalf("%d lines, want %d:\n%s", len(lines), len(want), raw)
	}
	for i := range want {
		if lines[i] != want[i] {
			t.Errorf("line %d:\n got %s\nwant %s", i+1, lines[i], want[i])
		}
	}
	d, err := ParseDraws(bytes.NewReader(raw), "tiny.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(encode(t, d), raw) {
		t.Error("parse → write changed the bytes")
	}
	if d.Failed() != 1 || len(d.Params()) != 2 || d.Attempts() != [3]int{1, 0, 1} {
		t.Errorf("Failed %d, Params %d, Attempts %v", d.Failed(), len(d.Params()), d.Attempts())
	}
}

func TestParseDrawsErrors(t *testing.T) {
	good := string(encode(t, tinyDraws(1, 1)))
	lines := strings.SplitAfter(good, "\n")
	header, r0, r1, r2 := lines[0], lines[1], lines[2], lines[3]
	for _, c := range []struct {
		name, in, want string
	}{
		{"empty", "", "empty file"},
		{"not json", "hello\n", "tiny.jsonl:1: not a draws file"},
		{"newer format", strings.Replace(good, `"sluice_draws":1`, `"sluice_draws":2`, 1), "tiny.jsonl:1: draws format version 2; this sluice reads version 1"},
		{"unknown key", strings.Replace(header, `"seed":9`, `"seed":9,"colour":"red"`, 1) + r0 + r1 + r2, `tiny.jsonl:1: unknown field "colour"`},
		{"huge run", strings.Replace(good, `"draws":3`, `"draws":99999999999`, 1), "tiny.jsonl:1: draws 99999999999 must be between 1 and 10000000"},
		{"bad shard", strings.Replace(good, `"shard":"1/1"`, `"shard":"4/3"`, 1), "tiny.jsonl:1: uncertainty: shard \"4/3\""},
		{"bad method", strings.Replace(good, `"method":"block"`, `"method":"jackknife"`, 1), `tiny.jsonl:1: method "jackknife"`},
		{"missing replicate", header + r0 + r2, "tiny.jsonl:3: replicate 1 is missing (index 2 follows)"},
		{"out of order", header + r0 + r1 + r1, "tiny.jsonl:4: index 1 repeated or out of order"},
		{"index too large", header + r0 + r1 + strings.Replace(r2, `"index":2`, `"index":3`, 1), "tiny.jsonl:4: index 3 outside 0..2"},
		{"cut short", header + r0 + r1, "tiny.jsonl: has 2 of the 3 replicates of shard 1/1 (replicate 2 is the first missing)"},
		{"no final newline", strings.TrimSuffix(good, "\n"), "tiny.jsonl:4: last line does not end in a newline"},
		{"failed with params", header + r0 + strings.Replace(r1, `"failed":true`, `"failed":true,"sse":1`, 1) + r2, "tiny.jsonl:3: failed replicate 1 must have a \"reason\""},
		{"ok without attempts", header + strings.Replace(r0, `"attempts":1,`, ``, 1) + r1 + r2, "tiny.jsonl:2: replicate 0 must have \"params\", \"sse\" and \"attempts\""},
		{"negative beta", header + strings.Replace(r0, `"beta":4900.25`, `"beta":-1`, 1) + r1 + r2, "tiny.jsonl:2: replicate 0: params.channels[0].beta -1 must be >= 0"},
		{"wrong channel count", header + strings.Replace(r0, `"channels":[{`, `"channels":[{"beta":1,"half_saturation":1},{`, 1) + r1 + r2, "tiny.jsonl:2: replicate 0: params has 2 channels, the model 1"},
		{"string index", header + strings.Replace(r0, `"index":0`, `"index":"0"`, 1) + r1 + r2, "tiny.jsonl:2: index: string is not a valid int"},
		{"two values", header + strings.TrimSuffix(r0, "\n") + "{}\n" + r1 + r2, "tiny.jsonl:2: more than one JSON value"},
		{"blank line", header + "\n" + r0 + r1 + r2, "tiny.jsonl:2: empty line"},
		{"NaN", header + strings.Replace(r0, `"sse":11`, `"sse":NaN`, 1) + r1 + r2, "tiny.jsonl:2: invalid JSON"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseDraws(strings.NewReader(c.in), "tiny.jsonl")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v\nwant it to contain %q", err, c.want)
			}
		})
	}
}

func TestReadDrawsFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "draws.jsonl")
	if err := os.WriteFile(path, encode(t, tinyDraws(1, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	d, err := ReadDraws(path)
	if err != nil || d.Source != path || len(d.Replicates) != 3 {
		t.Fatalf("ReadDraws = %+v, %v", d, err)
	}
	if _, err := ReadDraws(filepath.Join(t.TempDir(), "none.jsonl")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

func TestCheckRefusesOtherInputs(t *testing.T) {
	d := tinyDraws(1, 1)
	d.Source = "/some/dir/draws.jsonl"
	spec := model.NewSpec([]string{"search"}, nil)
	spec.Harm = 0
	data := strings.Repeat("ab", 32)
	if err := d.Check(data, "", spec); err != nil {
		t.Fatalf("matching inputs refused: %v", err)
	}
	other := spec
	other.Horizon, other.Starts = 26, 10 // not part of what a replicate means
	if err := d.Check(data, "", other); err != nil {
		t.Errorf("horizon and starts should not matter: %v", err)
	}
	exp := model.NewSpec([]string{"search"}, nil)
	exp.Harm = 0
	exp.Channels[0].Saturation, exp.Channels[0].Shape = model.SaturationExponential, model.Range{}
	trend := spec
	trend.Trend = false
	two := model.NewSpec([]string{"search", "tv"}, nil)
	for _, c := range []struct {
		name       string
		data, file string
		spec       model.Spec
		want       string
	}{
		{"data", strings.Repeat("cd", 32), "", spec, "draws.jsonl was made from data with sha256 abababababab…, not the given data (cdcdcdcdcdcd…); rerun sluice bootstrap"},
		{"spec file", data, strings.Repeat("ef", 32), spec, "draws.jsonl was made from spec with sha256 none, not the given spec (efefefefefef…)"},
		{"channels", data, "", two, "draws.jsonl was made with channels [search], not [search tv]"},
		{"saturation", data, "", exp, "made with channel search as geometric/hill"},
		{"fixed columns", data, "", trend, "made with base and controls [intercept trend], not [intercept]"},
	} {
		err := d.Check(c.data, c.file, c.spec)
		var me *MismatchError
		if !errors.As(err, &me) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v\nwant a MismatchError containing %q", c.name, err, c.want)
		}
	}
	me := &MismatchError{Draws: "draws.jsonl", What: "data", Recorded: "ab12", Given: "cd34", GivenName: "weekly.csv"}
	if got, want := me.Error(), "draws.jsonl was made from data with sha256 ab12, not weekly.csv (cd34); rerun sluice bootstrap"; got != want {
		t.Errorf("named mismatch:\n got %s\nwant %s", got, want)
	}
}

func TestMergeErrors(t *testing.T) {
	a, b, c := tinyDraws(1, 3), tinyDraws(2, 3), tinyDraws(3, 3)
	a.Source, b.Source, c.Source = "p1.jsonl", "p2.jsonl", "p3.jsonl"
	m, err := Merge([]*Draws{c, a, b})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(encode(t, m), encode(t, tinyDraws(1, 1))) {
		t.Error("merge of 3 shards differs from the whole run")
	}
	// Shards of different N that still hold every replicate once merge too.
	h1, h2 := tinyDraws(1, 2), tinyDraws(2, 4)
	if _, err := Merge([]*Draws{h1, h2}); err != nil {
		t.Errorf("1/2 + 2/4 (replicates 0, 2 and 1) refused: %v", err)
	}
	seed := tinyDraws(2, 3)
	seed.Source, seed.Header.Seed = "p2.jsonl", 10
	for _, x := range []struct {
		name  string
		parts []*Draws
		want  string
	}{
		{"none", nil, "no draws files given"},
		{"missing", []*Draws{a, c}, "1 of 3 replicates are in none of the files (first missing: 1); shard 2/3 is missing"},
		{"missing, mixed split", []*Draws{a, h2}, "1 of 3 replicates are in none of the files (first missing: 2); a shard is missing"},
		{"twice", []*Draws{a, b, c, b}, "replicate 1 is in both p2.jsonl and p2.jsonl"},
		{"other seed", []*Draws{a, seed, c}, "p2.jsonl is not from the same run as p1.jsonl (seed 10, not 9)"},
	} {
		if _, err := Merge(x.parts); err == nil || !strings.Contains(err.Error(), x.want) {
			t.Errorf("%s: %v\nwant %q", x.name, err, x.want)
		}
	}
}

// The reader never panics; what it accepts it writes back in canonical
// form, and the canonical form reads back to the same bytes.
func FuzzParseDraws(f *testing.F) {
	for _, d := range []*Draws{tinyDraws(1, 1), tinyDraws(2, 3)} {
		f.Add(encode(f, d))
	}
	f.Fuzz(func(t *testing.T, in []byte) {
		d, err := ParseDraws(bytes.NewReader(in), "fuzz.jsonl")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.jsonl") {
				t.Fatalf("error %q does not name the file", err)
			}
			return
		}
		once := encode(t, d)
		again, err := ParseDraws(bytes.NewReader(once), "fuzz.jsonl")
		if err != nil {
			t.Fatalf("canonical form refused: %v\n%s", err, once)
		}
		if twice := encode(t, again); !bytes.Equal(once, twice) {
			t.Fatalf("canonical form not stable:\n%s\n%s", once, twice)
		}
		if len(again.Replicates) != len(d.Replicates) || again.Failed() != d.Failed() {
			t.Fatal("replicates changed on rewrite")
		}
	})
}
