package examples_test

import (
	"fmt"
	"os"
	"os/exec"
	"path"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"sluice/internal/strictyaml"
	"sluice/uncertainty"
)

// k8sJob is the part of Kubernetes' batch/v1 Job schema the example uses.
// Decoding is strict: a key outside this (a typo such as "completion"
// for "completions") fails the test instead of being ignored.
type k8sJob struct {
	APIVersion string `yaml:"apiVersion"`
	Kind       string `yaml:"kind"`
	Metadata   struct {
		Name string `yaml:"name"`
	} `yaml:"metadata"`
	Spec struct {
		CompletionMode       string `yaml:"completionMode"`
		Completions          *int   `yaml:"completions"`
		Parallelism          *int   `yaml:"parallelism"`
		BackoffLimitPerIndex *int   `yaml:"backoffLimitPerIndex"`
		Template             struct {
			Spec struct {
				RestartPolicy string         `yaml:"restartPolicy"`
				Containers    []k8sContainer `yaml:"containers"`
				Volumes       []struct {
					Name                  string `yaml:"name"`
					PersistentVolumeClaim struct {
						ClaimName string `yaml:"claimName"`
					} `yaml:"persistentVolumeClaim"`
				} `yaml:"volumes"`
			} `yaml:"spec"`
		} `yaml:"template"`
	} `yaml:"spec"`
}

type k8sContainer struct {
	Name       string `yaml:"name"`
	Image      string `yaml:"image"`
	WorkingDir string `yaml:"workingDir"`
	Resources  struct {
		Requests map[string]string `yaml:"requests"`
		Limits   map[string]string `yaml:"limits"`
	} `yaml:"resources"`
	Command      []string `yaml:"command"`
	Args         []string `yaml:"args"`
	VolumeMounts []struct {
		Name      string `yaml:"name"`
		MountPath string `yaml:"mountPath"`
	} `yaml:"volumeMounts"`
}

const manifest = "k8s-bootstrap-job.yml"

// The shipped manifest passes every check.
func TestK8sManifest(t *testing.T) {
	data, err := os.ReadFile(manifest)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range checkManifest(t, data) {
		t.Error(p)
	}
}

// The checks are not vacuous: each broken variant of the manifest is
// caught with the problem named.
func TestK8sManifestCatchesMistakes(t *testing.T) {
	data, err := os.ReadFile(manifest)
	if err != nil {
		t.Fatal(err)
	}
	good := string(data)
	for _, c := range []struct{ name, old, new, want string }{
		{"index not shifted", "JOB_COMPLETION_INDEX + 1", "JOB_COMPLETION_INDEX", `shard "0/8"`},
		{"N not the completions", `+ 1))/8"`, `+ 1))/7"`, "pod 0 runs shard 1/7, want 1/8"},
		{"completions not N", "completions: 8", "completions: 9", "pod 0 runs shard 1/8, want 1/9"},
		{"parallelism above completions", "parallelism: 8", "parallelism: 10", "parallelism 10 is not in 1..8"},
		{"not indexed", "completionMode: Indexed", "completionMode: NonIndexed", `completionMode "NonIndexed"`},
		{"output the merge does not read", `"/shared/part-$$`, `"/shared/shard-$$`, "which the merge (/shared/part-*.jsonl) does not read"},
		{"one output for all pods", `part-$${JOB_COMPLETION_INDEX}.jsonl`, `part.jsonl`, "write /shared/part.jsonl"},
		{"typo in a key", "parallelism: 8", "paralelism: 8", "paralelism"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(good, c.old) {
				t.Fatalf("manifest no longer contains %q; update this test", c.old)
			}
			bad := strings.Replace(good, c.old, c.new, 1)
			problems := strings.Join(checkManifest(t, []byte(bad)), "\n")
			if !strings.Contains(problems, c.want) {
				t.Errorf("broken manifest: problems\n%s\nwant one containing %q", problems, c.want)
			}
		})
	}
}

// checkManifest decodes a Job manifest and runs every pod's command the way
// Kubernetes and the shell would, with a stand-in sluice that records its
// flags, and returns what is wrong.
//
// The Kubernetes rules checked are written here from memory of its
// documentation (the Job concept page, "Completion mode: Indexed", and the
// Container API reference for command and args): in an Indexed Job each pod
// gets an index 0..completions-1 in the environment variable
// JOB_COMPLETION_INDEX; Kubernetes expands "$(VAR)" in command and args and
// reduces "$$" to "$"; backoffLimitPerIndex needs restartPolicy Never. The
// sharding rule is sluice's own: the N pods run --shard 1/N .. N/N, each
// once (uncertainty.Shard), and write files the merge command reads.
func checkManifest(t *testing.T, data []byte) []string {
	t.Helper()
	var job k8sJob
	if err := strictyaml.Decode(data, manifest, &job); err != nil {
		return []string{err.Error()}
	}
	var problems []string
	bad := func(format string, a ...any) { problems = append(problems, fmt.Sprintf(format, a...)) }
	if job.APIVersion != "batch/v1" || job.Kind != "Job" {
		bad("apiVersion/kind %s/%s, want batch/v1 Job", job.APIVersion, job.Kind)
	}
	s := job.Spec
	if s.CompletionMode != "Indexed" {
		bad("completionMode %q, want Indexed (pods need JOB_COMPLETION_INDEX)", s.CompletionMode)
	}
	if s.Completions == nil || *s.Completions < 1 {
		bad("completions missing or below 1")
		return problems
	}
	n := *s.Completions
	if s.Parallelism == nil || *s.Parallelism < 1 || *s.Parallelism > n {
		p := "missing"
		if s.Parallelism != nil {
			p = strconv.Itoa(*s.Parallelism)
		}
		bad("parallelism %s is not in 1..%d", p, n)
	}
	if s.BackoffLimitPerIndex != nil && s.Template.Spec.RestartPolicy != "Never" {
		bad("backoffLimitPerIndex needs restartPolicy Never, not %q", s.Template.Spec.RestartPolicy)
	}
	if len(s.Template.Spec.Containers) != 1 {
		bad("%d containers, want 1", len(s.Template.Spec.Containers))
		return problems
	}
	c := s.Template.Spec.Containers[0]
	if len(c.Command) == 0 {
		bad("container has no command")
		return problems
	}
	mounted := map[string]bool{}
	for _, v := range s.Template.Spec.Volumes {
		mounted[v.Name] = v.PersistentVolumeClaim.ClaimName != ""
	}
	for _, m := range c.VolumeMounts {
		if !mounted[m.Name] {
			bad("volume mount %q has no volume with a claim", m.Name)
		}
	}

	// Every pod's flags, by running its command.
	fake := t.TempDir()
	record := filepath.Join(fake, "flags")
	stub := "#!/bin/sh\nprintf '%s\\n' \"$@\" > \"" + record + "-$JOB_COMPLETION_INDEX\"\n"
	if err := os.WriteFile(filepath.Join(fake, "sluice"), []byte(stub), 0o755); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(c.Command[0]); err != nil {
		t.Skipf("%s is not here to run the pods' command: %v", c.Command[0], err)
	}
	glob := mergeGlob(t)
	seen := map[int]int{} // shard K -> pod index
	outs := map[string]int{}
	for idx := range n {
		env := map[string]string{"JOB_COMPLETION_INDEX": strconv.Itoa(idx)}
		argv := append(append([]string{}, expand(c.Command, env)...), expand(c.Args, env)...)
		cmd := exec.Command(argv[0], argv[1:]...)
		cmd.Dir = fake
		cmd.Env = []string{"PATH=" + fake + ":/usr/bin:/bin", "JOB_COMPLETION_INDEX=" + strconv.Itoa(idx)}
		if out, err := cmd.CombinedOutput(); err != nil {
			bad("pod %d: command fails: %v: %s", idx, err, out)
			continue
		}
		b, err := os.ReadFile(record + "-" + strconv.Itoa(idx))
		if err != nil {
			bad("pod %d runs no sluice: %v", idx, err)
			continue
		}
		sub, flags := flagValues(strings.Split(strings.TrimSuffix(string(b), "\n"), "\n"))
		if sub != "bootstrap" {
			bad("pod %d runs sluice %q, want sluice bootstrap", idx, sub)
			continue
		}
		sh, err := uncertainty.ParseShard(flags["--shard"])
		switch {
		case err != nil:
			bad("pod %d runs %v", idx, err)
			continue
		case sh.N != n || sh.K != idx+1:
			bad("pod %d runs shard %s, want %d/%d", idx, sh, idx+1, n)
		}
		if prev, ok := seen[sh.K]; ok {
			bad("pods %d and %d both run shard %s", prev, idx, sh)
		}
		seen[sh.K] = idx
		out := flags["--out"]
		if prev, ok := outs[out]; ok {
			bad("pods %d and %d both write %s", prev, idx, out)
		}
		outs[out] = idx
		if ok, _ := path.Match(glob, out); !ok {
			bad("pod %d writes %s, which the merge (%s) does not read", idx, out, glob)
		}
	}
	// Together the shards hold each replicate exactly once (checked on the
	// first 3n indexes; the rule is periodic in n).
	for i := range 3 * n {
		hits := 0
		for k := 1; k <= n; k++ {
			if _, ok := seen[k]; ok && (uncertainty.Shard{K: k, N: n}).Has(i) {
				hits++
			}
		}
		if hits != 1 {
			bad("replicate %d is in %d shards, want 1", i, hits)
			break
		}
	}
	return problems
}

// expand applies Kubernetes' expansion of command and args: "$$" becomes
// "$", "$(NAME)" becomes NAME's value when NAME is set, and anything else
// is left as written.
func expand(in []string, env map[string]string) []string {
	out := make([]string, len(in))
	for j, s := range in {
		var b strings.Builder
		for i := 0; i < len(s); i++ {
			if s[i] != '$' || i+1 == len(s) {
				b.WriteByte(s[i])
				continue
			}
			switch s[i+1] {
			case '$':
				b.WriteByte('$')
				i++
			case '(':
				if end := strings.IndexByte(s[i:], ')'); end > 0 {
					if v, ok := env[s[i+2:i+end]]; ok {
						b.WriteString(v)
						i += end
						continue
					}
				}
				b.WriteByte('$')
			default:
				b.WriteByte('$')
			}
		}
		out[j] = b.String()
	}
	return out
}

// flagValues splits sluice's arguments into the subcommand and a map of
// each "--flag" to the argument after it.
func flagValues(args []string) (string, map[string]string) {
	m := map[string]string{}
	if len(args) == 0 {
		return "", m
	}
	for i := 1; i < len(args); i++ {
		if strings.HasPrefix(args[i], "--") && i+1 < len(args) && !strings.HasPrefix(args[i+1], "--") {
			m[args[i]] = args[i+1]
			i++
		}
	}
	return args[0], m
}

// mergeGlob is the file pattern of the merge command the manifest's
// comment tells the user to run.
func mergeGlob(t *testing.T) string {
	t.Helper()
	data, err := os.ReadFile(manifest)
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`(?m)^#\s+sluice merge --out \S+ (\S+)$`).FindSubmatch(data)
	if m == nil {
		t.Fatalf("%s: no `sluice merge --out FILE PATTERN` line in the comment", manifest)
	}
	return string(m[1])
}
