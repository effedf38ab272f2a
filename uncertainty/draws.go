package uncertainty

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"

	"sluice/model"
)

// FormatVersion is the version of the draws file format written, the value
// of the header's "sluice_draws" key. DRAWS.md documents the format.
const FormatVersion = 1

// MaxDraws bounds the replicates of a run, so that a corrupt header cannot
// make a reader allocate without limit.
const MaxDraws = 10_000_000

// Draws is a bootstrap run: its header and one fitted model (or a recorded
// failure) per replicate, in increasing index.
type Draws struct {
	Header     Header
	Replicates []Replicate
	// Source names where the draws were read from, for messages; it is
	// not written.
	Source string
}

// Header is line 1 of a draws file: everything a replicate depends on.
type Header struct {
	Format          int     `json:"sluice_draws"`
	ToolVersion     string  `json:"tool_version"`
	Seed            uint64  `json:"seed"`
	Method          Method  `json:"method"`
	BlockLength     float64 `json:"block_length"`      // as used; 0 for wild
	BlockLengthAuto bool    `json:"block_length_auto"` // chosen by RegressionBlockLength on the full fit's residuals
	// BlockRule is the automatic rule's working (nil when the length was given or for wild).
	BlockRule *RegressionBlock `json:"block_rule,omitempty"`
	// Inflation is the factor √(n/(n−p)) the resampled residuals are scaled by.
	Inflation float64 `json:"residual_inflation,omitempty"`
	// PriorDraws is set when every replicate refits under prior centres
	// redrawn from the priors (randomized maximum likelihood; Bootstrap).
	PriorDraws bool `json:"prior_draws,omitempty"`
	// RefitStarts is the number of starts of each replicate's refit.
	RefitStarts int       `json:"refit_starts,omitempty"`
	Draws       int       `json:"draws"` // replicates of the whole run, all shards
	Shard       string    `json:"shard"` // "K/N"
	Inputs      Inputs    `json:"inputs"`
	Model       ModelInfo `json:"model"`
	FullFit     FullFit   `json:"full_fit"`
}

// Inputs are the content hashes (SHA-256, lowercase hex) of the files the
// run was made from; SpecSHA256 is empty when no spec file was used.
type Inputs struct {
	DataSHA256  string `json:"data_sha256"`
	SpecSHA256  string `json:"spec_sha256"`
	LiftsSHA256 string `json:"lifts_sha256,omitempty"` // the lift tests the fits were calibrated with; absent without
}

// ModelInfo is the model structure the parameters of every replicate refer
// to.
type ModelInfo struct {
	Weeks    int           `json:"weeks"`
	Channels []ChannelInfo `json:"channels"`
	Controls []string      `json:"controls"`
	Fixed    []string      `json:"fixed"` // names of Params.Fixed, in order
	Period   float64       `json:"period_weeks"`
	Horizon  int           `json:"horizon_weeks"`
	Starts   int           `json:"starts"`
}

// ChannelInfo is one channel's transforms, bounds and mean weekly spend (the
// unit of its half saturation).
type ChannelInfo struct {
	Name           string    `json:"name"`
	Adstock        string    `json:"adstock"`
	Saturation     string    `json:"saturation"`
	MaxLag         int       `json:"max_lag,omitempty"` // delayed only
	Decay          []float64 `json:"decay"`
	Peak           []float64 `json:"peak,omitempty"` // delayed only
	HalfSaturation []float64 `json:"half_saturation"`
	Shape          []float64 `json:"shape,omitempty"` // Hill only
	MeanSpend      float64   `json:"mean_spend"`
}

// FullFit is the fit of the observed data that every replicate resamples
// around and starts from.
type FullFit struct {
	Params model.Params `json:"params"`
	SSE    float64      `json:"sse"`
	Status string       `json:"status"`
	// Priors are the priors of the fit and of every refit (absent for a
	// plain least-squares fit), NoiseSD the σ that weighed them and the
	// lift rows, Penalty the priors' part of the fit's objective.
	Priors    model.Priors `json:"priors,omitempty"`
	NoiseSD   float64      `json:"noise_sd,omitempty"`
	Penalty   float64      `json:"penalty,omitempty"`
	LiftTests int          `json:"lift_tests,omitempty"` // lift tests in the likelihood
}

// Replicate is one bootstrap refit. A failed replicate has no parameters,
// only the reason; it is kept so that failures are counted, never dropped.
type Replicate struct {
	Index  int
	Params *model.Params // nil when Failed
	SSE    float64
	// Attempts is how many fits it took: 1 the warm refit, 2 its
	// continuation, 3 the multi-start retry (Bootstrap).
	Attempts int
	Failed   bool
	Reason   string // why it failed
}

// The two line shapes, in their fixed field order.
type okLine struct {
	Index    int           `json:"index"`
	Params   *model.Params `json:"params"`
	SSE      float64       `json:"sse"`
	Attempts int           `json:"attempts"`
	Failed   bool          `json:"failed"`
}

type failedLine struct {
	Index  int    `json:"index"`
	Failed bool   `json:"failed"`
	Reason string `json:"reason"`
}

// MarshalJSON writes a successful replicate as {"index", "params", "sse",
// "attempts", "failed": false} and a failed one as {"index", "failed": true,
// "reason"}.
func (r Replicate) MarshalJSON() ([]byte, error) {
	if r.Failed {
		return json.Marshal(failedLine{Index: r.Index, Failed: true, Reason: r.Reason})
	}
	return json.Marshal(okLine{Index: r.Index, Params: r.Params, SSE: r.SSE, Attempts: r.Attempts})
}

// NewModelInfo describes the design's model structure, with the multi-start
// count of the run (0 means the spec's).
func NewModelInfo(d *model.Design, starts int) ModelInfo {
	mi := specInfo(d.Spec)
	mi.Weeks = d.N
	if starts != 0 {
		mi.Starts = starts
	}
	for k := range mi.Channels {
		mi.Channels[k].MeanSpend = d.MeanSpend[k]
	}
	return mi
}

func specInfo(s model.Spec) ModelInfo {
	mi := ModelInfo{Controls: slices.Clone(s.Controls), Fixed: s.FixedNames(), Period: s.Period,
		Horizon: s.Horizon, Starts: s.Starts}
	if mi.Controls == nil {
		mi.Controls = []string{}
	}
	for _, c := range s.Channels {
		ci := ChannelInfo{Name: c.Name, Adstock: c.Adstock, Saturation: c.Saturation,
			Decay: c.Decay[:], HalfSaturation: c.HalfSaturation[:]}
		if c.Adstock == model.AdstockDelayed {
			ci.MaxLag, ci.Peak = c.MaxLag, c.Peak[:]
		}
		if c.Saturation == model.SaturationHill {
			ci.Shape = c.Shape[:]
		}
		mi.Channels = append(mi.Channels, ci)
	}
	return mi
}

// WriteTo writes the draws as JSON Lines: the header, then one line per
// replicate. The bytes depend only on the values: fixed field order, and
// floats in the shortest form that reads back exactly (encoding/json).
func (d *Draws) WriteTo(w io.Writer) (int64, error) {
	bw := bufio.NewWriter(w)
	var n int64
	line := func(v any) error {
		b, err := json.Marshal(v)
		if err != nil {
			return fmt.Errorf("uncertainty: writing draws: %w", err)
		}
		m, err := bw.Write(append(b, '\n'))
		n += int64(m)
		return err
	}
	if err := line(d.Header); err != nil {
		return n, err
	}
	for _, r := range d.Replicates {
		if err := line(r); err != nil {
			return n, err
		}
	}
	return n, bw.Flush()
}

// Params returns the parameters of the successful replicates, in index
// order.
func (d *Draws) Params() []model.Params {
	var out []model.Params
	for _, r := range d.Replicates {
		if !r.Failed {
			out = append(out, *r.Params)
		}
	}
	return out
}

// Failed returns the number of failed replicates.
func (d *Draws) Failed() int {
	n := 0
	for _, r := range d.Replicates {
		if r.Failed {
			n++
		}
	}
	return n
}

// Attempts counts the successful replicates by the attempt that converged:
// n[0] the warm refit, n[1] its continuation, n[2] the multi-start retry.
func (d *Draws) Attempts() (n [3]int) {
	for _, r := range d.Replicates {
		if !r.Failed && r.Attempts >= 1 && r.Attempts <= 3 {
			n[r.Attempts-1]++
		}
	}
	return n
}

// ReadDraws reads and checks a draws file.
func ReadDraws(path string) (*Draws, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ParseDraws(f, path)
}

// maxLine bounds one line of a draws file (a replicate of 20 channels is a
// few kilobytes), so a corrupt file cannot exhaust memory.
const maxLine = 4 << 20

// ParseDraws reads draws from r; name is used in messages as name:line. It
// refuses unknown keys, a newer format, a replicate that does not belong to
// the header's shard, indices out of order, and a file that lacks some of
// its shard's replicates (a job that did not finish).
func ParseDraws(r io.Reader, name string) (*Draws, error) {
	br := bufio.NewReader(r)
	d := &Draws{Source: name}
	lineNo := 0
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%s:%d: %s", name, lineNo, fmt.Sprintf(format, a...))
	}
	readLine := func() ([]byte, error) {
		var buf []byte
		for {
			chunk, err := br.ReadSlice('\n')
			buf = append(buf, chunk...)
			if len(buf) > maxLine {
				return nil, bad("line longer than %d bytes", maxLine)
			}
			if err == bufio.ErrBufferFull {
				continue
			}
			if err == io.EOF && len(buf) > 0 {
				return nil, bad("last line does not end in a newline (file cut short?)")
			}
			return buf, err
		}
	}
	decode := func(b []byte, v any) error {
		dec := json.NewDecoder(bytes.NewReader(b))
		dec.DisallowUnknownFields()
		if err := dec.Decode(v); err != nil {
			return bad("%s", jsonMessage(err))
		}
		if dec.More() {
			return bad("more than one JSON value on the line")
		}
		return nil
	}

	lineNo = 1
	b, err := readLine()
	if err == io.EOF {
		return nil, fmt.Errorf("%s: empty file, not a draws file", name)
	}
	if err != nil {
		return nil, err
	}
	var probe struct {
		Format *int `json:"sluice_draws"`
	}
	if json.Unmarshal(b, &probe) != nil || probe.Format == nil {
		return nil, bad("not a draws file (line 1 must be a JSON object with \"sluice_draws\")")
	}
	if *probe.Format != FormatVersion {
		return nil, bad("draws format version %d; this sluice reads version %d", *probe.Format, FormatVersion)
	}
	if err := decode(b, &d.Header); err != nil {
		return nil, err
	}
	shard, err := checkHeader(&d.Header)
	if err != nil {
		return nil, bad("%v", err)
	}
	h := &d.Header
	next := nextInShard(shard, 0) // the next index the shard should hold
	for {
		lineNo++
		b, err := readLine()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		var raw struct {
			Index    *int          `json:"index"`
			Params   *model.Params `json:"params"`
			SSE      *float64      `json:"sse"`
			Attempts *int          `json:"attempts"`
			Failed   *bool         `json:"failed"`
			Reason   *string       `json:"reason"`
		}
		if err := decode(b, &raw); err != nil {
			return nil, err
		}
		if raw.Index == nil || raw.Failed == nil {
			return nil, bad("a replicate needs \"index\" and \"failed\"")
		}
		i := *raw.Index
		switch {
		case i < 0 || i >= h.Draws:
			return nil, bad("index %d outside 0..%d", i, h.Draws-1)
		case !shard.Has(i):
			return nil, bad("index %d does not belong to shard %s", i, shard)
		case i < next:
			return nil, bad("index %d repeated or out of order", i)
		case i > next:
			return nil, bad("replicate %d is missing (index %d follows)", next, i)
		}
		rep := Replicate{Index: i, Failed: *raw.Failed}
		if rep.Failed {
			if raw.Reason == nil || *raw.Reason == "" || raw.Params != nil || raw.SSE != nil || raw.Attempts != nil {
				return nil, bad("failed replicate %d must have a \"reason\" and no params, sse or attempts", i)
			}
			rep.Reason = *raw.Reason
		} else {
			if raw.Params == nil || raw.SSE == nil || raw.Attempts == nil || raw.Reason != nil {
				return nil, bad("replicate %d must have \"params\", \"sse\" and \"attempts\" and no reason", i)
			}
			if *raw.Attempts < 1 || *raw.Attempts > 3 {
				return nil, bad("replicate %d: attempts %d must be 1, 2 or 3", i, *raw.Attempts)
			}
			if err := checkParams(*raw.Params, &h.Model); err != nil {
				return nil, bad("replicate %d: %v", i, err)
			}
			if !(*raw.SSE >= 0) {
				return nil, bad("replicate %d: sse %g must be >= 0", i, *raw.SSE)
			}
			rep.Params, rep.SSE, rep.Attempts = raw.Params, *raw.SSE, *raw.Attempts
		}
		d.Replicates = append(d.Replicates, rep)
		next = nextInShard(shard, next+1)
	}
	if next < h.Draws {
		want := shardSize(shard, h.Draws)
		return nil, fmt.Errorf("%s: has %d of the %d replicates of shard %s (replicate %d is the first missing); rerun that shard",
			name, len(d.Replicates), want, shard, next)
	}
	return d, nil
}

// nextInShard returns the smallest replicate index >= i of shard s.
func nextInShard(s Shard, i int) int {
	if s.N <= 1 {
		return i
	}
	r := s.K - 1
	if i <= r {
		return r
	}
	return r + (i-r+s.N-1)/s.N*s.N
}

// shardSize is the number of replicates of shard s in a run of draws.
func shardSize(s Shard, draws int) int {
	if s.N <= 1 {
		return draws
	}
	if draws <= s.K-1 {
		return 0
	}
	return (draws - s.K + s.N) / s.N
}

// jsonMessage shortens encoding/json errors to what a user can act on.
func jsonMessage(err error) string {
	var se *json.SyntaxError
	if errors.As(err, &se) {
		return fmt.Sprintf("invalid JSON at byte %d: %v", se.Offset, se)
	}
	var te *json.UnmarshalTypeError
	if errors.As(err, &te) {
		return fmt.Sprintf("%s: %s is not a valid %s", te.Field, te.Value, te.Type)
	}
	if err == io.EOF {
		return "empty line"
	}
	return strings.TrimPrefix(err.Error(), "json: ")
}

func checkHeader(h *Header) (Shard, error) {
	if h.Draws < 1 || h.Draws > MaxDraws {
		return Shard{}, fmt.Errorf("draws %d must be between 1 and %d", h.Draws, MaxDraws)
	}
	shard, err := ParseShard(h.Shard)
	if err != nil {
		return Shard{}, err
	}
	if shard.String() != h.Shard {
		return Shard{}, fmt.Errorf("shard %q is not written as K/N", h.Shard)
	}
	if _, err := ParseMethod(string(h.Method)); err != nil || h.Method == "" {
		return Shard{}, fmt.Errorf("method %q is not one of block, stationary, wild", h.Method)
	}
	if !finite(h.BlockLength) || h.BlockLength < 0 {
		return Shard{}, fmt.Errorf("block_length %g must be >= 0", h.BlockLength)
	}
	m := &h.Model
	if len(m.Channels) == 0 {
		return Shard{}, errors.New("model.channels is empty")
	}
	for k, c := range m.Channels {
		if c.Name == "" {
			return Shard{}, fmt.Errorf("model.channels[%d].name is empty", k)
		}
		if len(c.Decay) != 2 || len(c.HalfSaturation) != 2 {
			return Shard{}, fmt.Errorf("model.channels[%d]: decay and half_saturation must be [low, high]", k)
		}
		if !(c.MeanSpend >= 0) || !finite(c.MeanSpend) {
			return Shard{}, fmt.Errorf("model.channels[%d].mean_spend %g must be >= 0", k, c.MeanSpend)
		}
	}
	if len(m.Fixed) == 0 {
		return Shard{}, errors.New("model.fixed is empty")
	}
	if err := checkParams(h.FullFit.Params, m); err != nil {
		return Shard{}, fmt.Errorf("full_fit: %v", err)
	}
	if !(h.FullFit.SSE >= 0) {
		return Shard{}, fmt.Errorf("full_fit.sse %g must be >= 0", h.FullFit.SSE)
	}
	// Decoding into a nil slice and writing back must give the same bytes.
	if m.Controls == nil {
		return Shard{}, errors.New("model.controls is missing (write [] for none)")
	}
	return shard, nil
}

// checkParams checks that p fits the model's layout and is finite.
func checkParams(p model.Params, m *ModelInfo) error {
	if len(p.Channels) != len(m.Channels) {
		return fmt.Errorf("params has %d channels, the model %d", len(p.Channels), len(m.Channels))
	}
	if len(p.Fixed) != len(m.Fixed) {
		return fmt.Errorf("params has %d fixed coefficients, the model %d", len(p.Fixed), len(m.Fixed))
	}
	if !finiteParams(p) {
		return errors.New("params are not all finite")
	}
	for k, c := range p.Channels {
		if c.Beta < 0 {
			return fmt.Errorf("params.channels[%d].beta %g must be >= 0", k, c.Beta)
		}
		if c.HalfSat <= 0 {
			return fmt.Errorf("params.channels[%d].half_saturation %g must be > 0", k, c.HalfSat)
		}
		if c.Decay < 0 || c.Decay >= 1 {
			return fmt.Errorf("params.channels[%d].decay %g must be in [0, 1)", k, c.Decay)
		}
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// MismatchError reports draws made from other inputs than those given.
type MismatchError struct {
	Draws    string // the draws file
	What     string // "data", "spec" or "model"
	Recorded string // what the draws file says
	Given    string // what was given
	// GivenName names the given input (e.g. weekly.csv); empty means
	// "the given data" / "the given spec".
	GivenName string
}

func (e *MismatchError) Error() string {
	name := e.GivenName
	if name == "" {
		name = "the given " + e.What
	}
	switch e.What {
	case "data", "spec":
		return fmt.Sprintf("%s was made from %s with sha256 %s, not %s (%s); rerun sluice bootstrap",
			e.Draws, e.What, shortHash(e.Recorded), name, shortHash(e.Given))
	}
	return fmt.Sprintf("%s was made with %s, not %s; rerun sluice bootstrap", e.Draws, e.Recorded, e.Given)
}

func shortHash(h string) string {
	switch {
	case h == "":
		return "none"
	case len(h) > 12:
		return h[:12] + "…"
	}
	return h
}

// Check refuses draws made from other data, another spec file or another
// model structure than the given ones, with a *MismatchError. The horizon and
// the multi-start count are not compared: they do not change what a
// replicate's parameters mean.
func (d *Draws) Check(dataSHA256, specSHA256 string, spec model.Spec) error {
	h := &d.Header
	if h.Inputs.DataSHA256 != dataSHA256 {
		return &MismatchError{Draws: d.Source, What: "data", Recorded: h.Inputs.DataSHA256, Given: dataSHA256}
	}
	if h.Inputs.SpecSHA256 != specSHA256 {
		return &MismatchError{Draws: d.Source, What: "spec", Recorded: h.Inputs.SpecSHA256, Given: specSHA256}
	}
	model := func(recorded, given string) error {
		return &MismatchError{Draws: d.Source, What: "model", Recorded: recorded, Given: given}
	}
	want := specInfo(spec)
	got := h.Model
	names := func(m ModelInfo) []string {
		var out []string
		for _, c := range m.Channels {
			out = append(out, c.Name)
		}
		return out
	}
	if !slices.Equal(names(got), names(want)) {
		return model(fmt.Sprintf("channels %v", names(got)), fmt.Sprint(names(want)))
	}
	for k, c := range got.Channels {
		w := want.Channels[k]
		c.MeanSpend = 0
		if a, b := fmt.Sprintf("%+v", c), fmt.Sprintf("%+v", w); a != b {
			return model(fmt.Sprintf("channel %s as %s", c.Name, describeChannel(c)), describeChannel(w))
		}
	}
	if !slices.Equal(got.Fixed, want.Fixed) {
		return model(fmt.Sprintf("base and controls %v", got.Fixed), fmt.Sprint(want.Fixed))
	}
	if got.Period != want.Period {
		return model(fmt.Sprintf("a season of %g weeks", got.Period), fmt.Sprintf("%g", want.Period))
	}
	return nil
}

func describeChannel(c ChannelInfo) string {
	s := fmt.Sprintf("%s/%s decay %v half_saturation %v", c.Adstock, c.Saturation, c.Decay, c.HalfSaturation)
	if c.Peak != nil {
		s += fmt.Sprintf(" peak %v max_lag %d", c.Peak, c.MaxLag)
	}
	if c.Shape != nil {
		s += fmt.Sprintf(" shape %v", c.Shape)
	}
	return s
}

// Merge combines the shards of one run into the draws of the whole run,
// identical to what one unsharded run writes. It refuses parts from
// different runs (any header field but the shard differs) and parts that do
// not together hold every replicate exactly once.
func Merge(parts []*Draws) (*Draws, error) {
	if len(parts) == 0 {
		return nil, errors.New("uncertainty: merge: no draws files given")
	}
	first := parts[0]
	want, err := headerKey(first.Header)
	if err != nil {
		return nil, err
	}
	h := first.Header
	owner := make([]int, h.Draws) // 1 + the part holding each replicate
	out := &Draws{Header: h}
	out.Header.Shard = Shard{}.String()
	for p, d := range parts {
		got, err := headerKey(d.Header)
		if err != nil {
			return nil, err
		}
		if got != want {
			return nil, fmt.Errorf("uncertainty: merge: %s is not from the same run as %s (%s)",
				d.Source, first.Source, headerDiff(first.Header, d.Header))
		}
		for _, r := range d.Replicates {
			if r.Index < 0 || r.Index >= h.Draws {
				return nil, fmt.Errorf("uncertainty: merge: %s: replicate index %d outside 0..%d", d.Source, r.Index, h.Draws-1)
			}
			if o := owner[r.Index]; o != 0 {
				return nil, fmt.Errorf("uncertainty: merge: replicate %d is in both %s and %s (shard %s given twice?)",
					r.Index, parts[o-1].Source, d.Source, d.Header.Shard)
			}
			owner[r.Index] = p + 1
		}
	}
	var missing []int
	for i, o := range owner {
		if o == 0 {
			missing = append(missing, i)
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("uncertainty: merge: %d of %d replicates are in none of the files (first missing: %d); %s",
			len(missing), h.Draws, missing[0], NameMissing(missing, commonShardCount(parts)))
	}
	out.Replicates = make([]Replicate, 0, h.Draws)
	next := make([]int, len(parts))
	for _, o := range owner {
		p := o - 1
		out.Replicates = append(out.Replicates, parts[p].Replicates[next[p]])
		next[p]++
	}
	return out, nil
}

// commonShardCount is the N of the parts' shards K/N when they all share
// it, else 0.
func commonShardCount(parts []*Draws) int {
	n := 0
	for _, d := range parts {
		s, err := ParseShard(d.Header.Shard)
		if err != nil || (n != 0 && s.N != n) {
			return 0
		}
		n = s.N
	}
	return n
}

// headerKey is the header's bytes without its shard: what the parts of one
// run share.
func headerKey(h Header) (string, error) {
	h.Shard = ""
	b, err := json.Marshal(h)
	if err != nil {
		return "", fmt.Errorf("uncertainty: merge: %w", err)
	}
	return string(b), nil
}

// headerDiff names the first header field that differs.
func headerDiff(a, b Header) string {
	type field struct {
		name string
		a, b any
	}
	for _, f := range []field{
		{"sluice_draws", a.Format, b.Format}, {"tool_version", a.ToolVersion, b.ToolVersion},
		{"seed", a.Seed, b.Seed}, {"method", a.Method, b.Method}, {"block_length", a.BlockLength, b.BlockLength},
		{"block_length_auto", a.BlockLengthAuto, b.BlockLengthAuto}, {"draws", a.Draws, b.Draws},
		{"inputs.data_sha256", a.Inputs.DataSHA256, b.Inputs.DataSHA256},
		{"inputs.spec_sha256", a.Inputs.SpecSHA256, b.Inputs.SpecSHA256},
	} {
		if fmt.Sprint(f.a) != fmt.Sprint(f.b) {
			return fmt.Sprintf("%s %v, not %v", f.name, f.b, f.a)
		}
	}
	ka, _ := json.Marshal(a.Model)
	kb, _ := json.Marshal(b.Model)
	if !bytes.Equal(ka, kb) {
		return "model differs"
	}
	return "full_fit differs"
}
