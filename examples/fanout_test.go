package examples_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// fanoutEnv runs examples/slurm/fanout.sh against stand-ins for sbatch,
// squeue, scancel and sluice that record their arguments. The end-to-end
// run on a real Slurm cluster is .ci/slurm.sh (CI); this test pins the
// commands the script gives Slurm, in the syntax of sbatch's manual page
// (Slurm 22.05, `man sbatch`): --array=1-4 or --array=3,5 (task ids),
// --dependency=afterok:JOBID (start after every task of JOBID ended with
// exit 0), --parsable (prints "JOBID" or "JOBID;CLUSTER"), and
// SLURM_ARRAY_TASK_ID in each task's environment.
type fanoutEnv struct {
	t   *testing.T
	dir string // holds bin/ (the stand-ins) and the logs they write
	run string // the run directory
}

func newFanoutEnv(t *testing.T) *fanoutEnv {
	t.Helper()
	if _, err := exec.LookPath("bash"); err != nil {
		t.Skip("bash is not here")
	}
	// Read the script here so that go test's cache sees it change (bash,
	// not this process, opens it below).
	if _, err := os.ReadFile("slurm/fanout.sh"); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	bin := filepath.Join(dir, "bin")
	if err := os.Mkdir(bin, 0o755); err != nil {
		t.Fatal(err)
	}
	stubs := map[string]string{
		// sbatch answers "JOBID;cluster" with ids 101, 102, ...
		"sbatch": `n=$(cat "$D/next" 2>/dev/null || echo 101); echo $((n + 1)) > "$D/next"
printf '%s\n' "$*" >> "$D/sbatch.log"; echo "$n;testcluster"`,
		// squeue prints the lines of $D/queue whose first field is the job or its tasks.
		"squeue": `for a; do case $prev in -j) id=$a;; esac; prev=$a; done
[ -f "$D/queue" ] && awk -v id="$id" '$1 == id || index($1, id "_") == 1' "$D/queue"; exit 0`,
		"scancel": `printf '%s\n' "$*" >> "$D/scancel.log"`,
		"sluice":  `printf '%s\n' "$*" >> "$D/sluice.log"; printf 'workers=%s\n' "${SLUICE_WORKERS:-}" >> "$D/sluice.log"; exit "${SLUICE_STUB_EXIT:-0}"`,
	}
	for name, body := range stubs {
		if err := os.WriteFile(filepath.Join(bin, name), []byte("#!/bin/sh\n"+body+"\n"), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return &fanoutEnv{t: t, dir: dir, run: filepath.Join(dir, "run")}
}

// fanout runs the script with extra environment; it returns the combined
// output and whether it succeeded.
func (e *fanoutEnv) fanout(env []string, args ...string) (string, bool) {
	e.t.Helper()
	cmd := exec.Command("bash", append([]string{"slurm/fanout.sh"}, args...)...)
	cmd.Env = append([]string{"PATH=" + filepath.Join(e.dir, "bin") + ":/usr/bin:/bin", "D=" + e.dir}, env...)
	out, err := cmd.CombinedOutput()
	return string(out), err == nil
}

func (e *fanoutEnv) read(name string) string {
	e.t.Helper()
	b, err := os.ReadFile(filepath.Join(e.dir, name))
	if err != nil && !os.IsNotExist(err) {
		e.t.Fatal(err)
	}
	return string(b)
}

func (e *fanoutEnv) touch(rel string) {
	e.t.Helper()
	p := filepath.Join(e.run, rel)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		e.t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte("x\n"), 0o644); err != nil {
		e.t.Fatal(err)
	}
}

func TestFanoutBootstrap(t *testing.T) {
	e := newFanoutEnv(t)
	out, ok := e.fanout(nil, "submit", "bootstrap", "4", e.run, "--data", "my data.csv", "--channels", "a,b", "--bootstrap-draws", "8000", "--seed", "7")
	if !ok {
		t.Fatalf("submit: %s", out)
	}
	self, _ := filepath.Abs("slurm/fanout.sh")
	want := "--parsable --job-name=sluice-bootstrap --array=1-4 --cpus-per-task=1 --output=" + e.run + "/logs/task-%a.out --open-mode=append " + self + " task " + e.run + "\n" +
		"--parsable --job-name=sluice-bootstrap-merge --dependency=afterok:101 --output=" + e.run + "/logs/merge-%j.out " + self + " merge " + e.run + "\n"
	if got := e.read("sbatch.log"); got != want {
		t.Errorf("sbatch calls:\n%s\nwant\n%s", got, want)
	}
	if got := e.read("run/jobs"); got != "tasks 101 1-4\nmerge 102\n" {
		t.Errorf("jobs file: %q", got)
	}

	// Task 3 of 4 runs shard 3/4 into part-3.jsonl, the flags intact
	// (the space in "my data.csv" survives run.args).
	out, ok = e.fanout([]string{"SLURM_ARRAY_TASK_ID=3", "SLUICE_BIN=sluice"}, "task", e.run)
	if !ok {
		t.Fatalf("task: %s", out)
	}
	wantRun := "bootstrap --data my data.csv --channels a,b --bootstrap-draws 8000 --seed 7 --quiet --shard 3/4 --out " + e.run + "/part-3.jsonl\nworkers=1\n"
	if got := e.read("sluice.log"); got != wantRun {
		t.Errorf("task 3 ran:\n%s\nwant\n%s", got, wantRun)
	}

	// Shard 3 failed: the merge job waits for ever; resubmit cancels it and
	// reruns shard 3 alone, with a new merge after it.
	e.touch("part-1.jsonl")
	e.touch("part-2.jsonl")
	e.touch("part-4.jsonl")
	if err := os.WriteFile(filepath.Join(e.dir, "queue"), []byte("102 PENDING DependencyNeverSatisfied\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, _ = e.fanout(nil, "status", e.run)
	if !strings.Contains(out, "without output: 3\n102 PENDING DependencyNeverSatisfied") {
		t.Errorf("status: %s", out)
	}
	out, ok = e.fanout(nil, "resubmit", e.run)
	if !ok {
		t.Fatalf("resubmit: %s", out)
	}
	if got := e.read("scancel.log"); got != "102\n" {
		t.Errorf("scancel calls %q, want the old merge job 102", got)
	}
	calls := strings.Split(strings.TrimSpace(e.read("sbatch.log")), "\n")
	if len(calls) != 4 || !strings.Contains(calls[2], " --array=3 ") || !strings.Contains(calls[3], " --dependency=afterok:103 ") {
		t.Errorf("resubmission sbatch calls:\n%s", strings.Join(calls[2:], "\n"))
	}

	// The merge reads the parts present, in shard order, and passes on
	// sluice's refusal with the resubmit hint.
	os.Remove(filepath.Join(e.dir, "sluice.log"))
	out, ok = e.fanout([]string{"SLUICE_STUB_EXIT=1"}, "merge", e.run)
	if ok || !strings.Contains(out, "hint: if shards are missing: fanout.sh resubmit "+e.run) {
		t.Errorf("failed merge: ok=%v %s", ok, out)
	}
	wantMerge := "merge --out " + e.run + "/draws.jsonl " + e.run + "/part-1.jsonl " + e.run + "/part-2.jsonl " + e.run + "/part-4.jsonl\n"
	if got := e.read("sluice.log"); !strings.HasPrefix(got, wantMerge) {
		t.Errorf("merge ran:\n%s\nwant\n%s", got, wantMerge)
	}
}

func TestFanoutRehearsalResubmitTwoShards(t *testing.T) {
	e := newFanoutEnv(t)
	if out, ok := e.fanout([]string{"FANOUT_CPUS=2"}, "submit", "rehearse", "5", e.run, "--worlds", "400"); !ok {
		t.Fatalf("submit: %s", out)
	}
	if got := e.read("sbatch.log"); !strings.Contains(got, "--job-name=sluice-rehearse --array=1-5 --cpus-per-task=2 ") {
		t.Errorf("sbatch: %s", got)
	}
	out, ok := e.fanout([]string{"SLURM_ARRAY_TASK_ID=5", "SLURM_CPUS_PER_TASK=2"}, "task", e.run)
	if !ok {
		t.Fatalf("task: %s", out)
	}
	if got, want := e.read("sluice.log"), "rehearse --worlds 400 --quiet --shard 5/5 --dir "+e.run+"/part-5\nworkers=2\n"; got != want {
		t.Errorf("task 5 ran %q, want %q", got, want)
	}
	// A rehearsal shard is done when its rehearsal.json is there; a bare
	// directory is not done.
	e.touch("part-1/rehearsal.json")
	e.touch("part-3/rehearsal.json")
	e.touch("part-4/rehearsal.json")
	if err := os.MkdirAll(filepath.Join(e.run, "part-2"), 0o755); err != nil {
		t.Fatal(err)
	}
	if out, ok := e.fanout(nil, "resubmit", e.run); !ok {
		t.Fatalf("resubmit: %s", out)
	}
	if got := e.read("sbatch.log"); !strings.Contains(got, " --array=2,5 ") {
		t.Errorf("resubmission is not shards 2 and 5:\n%s", got)
	}
}

func TestFanoutRefusals(t *testing.T) {
	e := newFanoutEnv(t)
	for _, c := range []struct {
		name string
		env  []string
		args []string
		want string
	}{
		{"no command", nil, nil, "usage: fanout.sh submit KIND N RUNDIR"},
		{"kind", nil, []string{"submit", "fit", "2", e.run}, `KIND must be bootstrap or rehearse, not "fit"`},
		{"shards", nil, []string{"submit", "bootstrap", "two", e.run}, `N must be a whole number of shards, not "two"`},
		{"zero shards", nil, []string{"submit", "bootstrap", "0", e.run}, "N must be at least 1"},
		{"out set", nil, []string{"submit", "bootstrap", "2", e.run, "--out", "x.jsonl"}, "--out is set by fanout.sh"},
		{"shard set", nil, []string{"submit", "bootstrap", "2", e.run, "--shard=1/2"}, "--shard=1/2 is set by fanout.sh"},
		{"not a run", nil, []string{"status", e.dir}, e.dir + "/run.args not found"},
		{"task without a run", nil, []string{"task", e.run}, "run.args not found"},
	} {
		t.Run(c.name, func(t *testing.T) {
			out, ok := e.fanout(c.env, c.args...)
			if ok || !strings.Contains(out, c.want) {
				t.Errorf("ok=%v, output:\n%s\nwant it to contain %q", ok, out, c.want)
			}
		})
	}
	if e.read("sbatch.log") != "" {
		t.Fatal("a refused submit called sbatch")
	}

	// A run is not submitted twice, and not resubmitted while its tasks run.
	if out, ok := e.fanout(nil, "submit", "bootstrap", "2", e.run); !ok {
		t.Fatal(out)
	}
	if out, ok := e.fanout(nil, "submit", "bootstrap", "2", e.run); ok || !strings.Contains(out, "already holds a run") {
		t.Errorf("second submit: %s", out)
	}
	if out, ok := e.fanout(nil, "task", e.run); ok || !strings.Contains(out, "fanout.sh task runs inside a Slurm array job") {
		t.Errorf("task outside an array job: %s", out)
	}
	if err := os.WriteFile(filepath.Join(e.dir, "queue"), []byte("101_2 RUNNING None\n102 PENDING Dependency\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if out, ok := e.fanout(nil, "resubmit", e.run); ok || !strings.Contains(out, "still in the queue: 101_2 RUNNING None") {
		t.Errorf("resubmit while running: %s", out)
	}
	if e.read("scancel.log") != "" {
		t.Error("resubmit while running cancelled a job")
	}
	// Every shard done: nothing to rerun.
	os.Remove(filepath.Join(e.dir, "queue"))
	e.touch("part-1.jsonl")
	e.touch("part-2.jsonl")
	if out, ok := e.fanout(nil, "resubmit", e.run); ok || !strings.Contains(out, "every shard has its output") {
		t.Errorf("resubmit with all shards: %s", out)
	}
	if got := e.read("sluice.log"); got != "" {
		t.Errorf("refusals ran sluice: %s", got)
	}
	if _, ok := e.fanout([]string{"SLURM_ARRAY_TASK_ID=1"}, "task", e.run); !ok {
		t.Error("task 1 of the run failed")
	}
}
