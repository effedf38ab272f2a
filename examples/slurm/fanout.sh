#!/usr/bin/env bash
#SBATCH --ntasks=1
#SBATCH --cpus-per-task=1
#
# fanout.sh: run a sluice bootstrap or rehearsal as a Slurm array job, one
# shard per array task, then merge the shards in a job that starts only when
# every task succeeded (--dependency=afterok). Replicate (or world) i depends
# only on the seed and i, so the merged file is byte for byte the file of one
# unsharded run; .ci/slurm.sh checks exactly that on a single-node cluster.
#
#   fanout.sh submit KIND N RUNDIR [sluice flags...]   KIND: bootstrap or rehearse
#   fanout.sh status RUNDIR                            shards done and missing, jobs in the queue
#   fanout.sh resubmit RUNDIR                          rerun only the shards without output, then the merge
#   fanout.sh merge RUNDIR                             merge now, without Slurm (also what the merge job runs)
#
# Slurm runs the same file as the job script ("task RUNDIR" in each array
# task, "merge RUNDIR" in the merge job), so the run directory must be on a
# file system that every node sees, and sluice must be on the nodes' PATH
# (or set SLUICE_BIN to its path; sbatch passes the environment on).
# sbatch's own input variables choose partition and limits
# (SBATCH_PARTITION, SBATCH_TIMELIMIT, SBATCH_ACCOUNT, ...); FANOUT_CPUS sets
# CPUs per task (default 1), used as sluice's --workers.
#
# A run directory holds one run:
#   run.args       what to run: kind, shard count and sluice flags (from submit)
#   jobs           one line per submission: "tasks JOBID ARRAY" or "merge JOBID"
#   part-K.jsonl   bootstrap shard K of N, written by array task K, or
#   part-K/        rehearsal shard K (rehearsal.json and rehearsal.html)
#   draws.jsonl    the merged bootstrap, or
#   rehearsal/     the merged rehearsal (rehearsal.json and rehearsal.html)
#   logs/          Slurm's output: task-K.out (all attempts), merge-JOBID.out
#
# sluice writes every file through a temporary file and a rename, so a task
# that fails or is killed leaves no part: the parts present are complete, and
# the shards without a part are exactly the ones to rerun.
set -euo pipefail

sluice_bin=${SLUICE_BIN:-sluice}

fail() {
	printf 'fanout: %s\n' "$1" >&2
	[ -z "${2:-}" ] || printf 'hint: %s\n' "$2" >&2
	exit 1
}

usage() {
	fail "usage: fanout.sh submit KIND N RUNDIR [sluice flags...] | status RUNDIR | resubmit RUNDIR | merge RUNDIR" \
		"fanout.sh submit bootstrap 8 runs/boot --data weekly.csv --kpi revenue --channels search,tv --bootstrap-draws 8000 --seed 7"
}

# load_run DIR: read DIR/run.args into kind, shards and flags.
load_run() {
	[ -f "$1/run.args" ] || fail "$1/run.args not found: $1 is not a run directory" "start a run with: fanout.sh submit KIND N $1 ..."
	kind='' shards='' flags=()
	# shellcheck disable=SC1091
	. "$1/run.args"
	case $kind in bootstrap | rehearse) ;; *) fail "$1/run.args: kind must be bootstrap or rehearse" ;; esac
	case $shards in '' | *[!0-9]*) fail "$1/run.args: shards must be a whole number" ;; esac
}

# part_file DIR K: the file shard K leaves when it succeeded.
part_file() {
	if [ "$kind" = bootstrap ]; then
		printf '%s/part-%s.jsonl' "$1" "$2"
	else
		printf '%s/part-%s/rehearsal.json' "$1" "$2"
	fi
}

# missing_shards DIR: the shards without output, comma-separated (Slurm's
# --array syntax).
missing_shards() {
	local k list=''
	for ((k = 1; k <= shards; k++)); do
		[ -f "$(part_file "$1" "$k")" ] || list=${list:+$list,}$k
	done
	printf '%s' "$list"
}

# queued_jobs DIR: the run's jobs still in Slurm's queue (pending or running).
queued_jobs() {
	local what id rest
	[ -f "$1/jobs" ] || return 0
	# One query per job: squeue refuses a list holding a job it has
	# already forgotten.
	while read -r what id rest; do
		squeue -h -j "$id" -o '%i %T %r' 2>/dev/null || true
	done <"$1/jobs"
}

# submit_jobs DIR ARRAY: submit the array tasks and the dependent merge.
submit_jobs() {
	local dir=$1 array=$2 self tasks merge
	self=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)/$(basename "${BASH_SOURCE[0]}")
	tasks=$(sbatch --parsable --job-name="sluice-$kind" --array="$array" \
		--cpus-per-task="${FANOUT_CPUS:-1}" --output="$dir/logs/task-%a.out" --open-mode=append \
		"$self" task "$dir")
	tasks=${tasks%%;*}
	merge=$(sbatch --parsable --job-name="sluice-$kind-merge" --dependency="afterok:$tasks" \
		--output="$dir/logs/merge-%j.out" "$self" merge "$dir")
	merge=${merge%%;*}
	printf 'tasks %s %s\nmerge %s\n' "$tasks" "$array" "$merge" >>"$dir/jobs"
	printf 'submitted %s shards %s of %s as array job %s; merge job %s starts when all of them succeed\n' \
		"$kind" "$array" "$shards" "$tasks" "$merge"
}

cmd=${1:-}
[ $# -gt 0 ] && shift
case $cmd in
submit)
	[ $# -ge 3 ] || usage
	kind=$1 shards=$2 dir=$3
	shift 3
	case $kind in bootstrap | rehearse) ;; *) fail "KIND must be bootstrap or rehearse, not \"$kind\"" ;; esac
	case $shards in '' | *[!0-9]*) fail "N must be a whole number of shards, not \"$shards\"" ;; esac
	[ "$shards" -ge 1 ] || fail "N must be at least 1"
	for f in "$@"; do
		case $f in
		--shard | --shard=* | -shard | -shard=* | --out | --out=* | -out | -out=* | --dir | --dir=* | -dir | -dir=*)
			fail "$f is set by fanout.sh (shard K of N per task, outputs in RUNDIR)" ;;
		esac
	done
	[ ! -e "$dir/run.args" ] || fail "$dir already holds a run" "fanout.sh status $dir, or fanout.sh resubmit $dir"
	mkdir -p "$dir/logs"
	dir=$(cd "$dir" && pwd)
	{
		printf 'kind=%q\nshards=%q\nflags=(' "$kind" "$shards"
		[ $# -eq 0 ] || printf ' %q' "$@"
		printf ' )\n'
	} >"$dir/run.args.tmp"
	mv "$dir/run.args.tmp" "$dir/run.args"
	submit_jobs "$dir" "1-$shards"
	;;
status)
	[ $# -eq 1 ] || usage
	dir=$1
	load_run "$dir"
	missing=$(missing_shards "$dir")
	printf '%s, %s shards in %s; without output: %s\n' "$kind" "$shards" "$dir" "${missing:-none}"
	merged=$dir/draws.jsonl
	[ "$kind" = bootstrap ] || merged=$dir/rehearsal/rehearsal.json
	[ ! -f "$merged" ] || printf 'merged: %s\n' "$merged"
	queued_jobs "$dir"
	;;
resubmit)
	[ $# -eq 1 ] || usage
	dir=$(cd "$1" 2>/dev/null && pwd) || fail "$1: no such run directory"
	load_run "$dir"
	# A task still queued or running would be computed twice.
	if [ -f "$dir/jobs" ]; then
		last_merge=$(awk '$1 == "merge" {id = $2} END {print id}' "$dir/jobs")
		busy=$(queued_jobs "$dir" | awk -v m="$last_merge" '$1 != m' || true)
		[ -z "$busy" ] || fail "tasks of this run are still in the queue: $(printf '%s' "$busy" | tr '\n' ';')" "wait until squeue no longer lists them"
		# The last merge waits for tasks that will never all succeed.
		if [ -n "$last_merge" ] && [ -n "$(queued_jobs "$dir" | awk -v m="$last_merge" '$1 == m')" ]; then
			scancel "$last_merge"
			printf 'cancelled merge job %s (it was waiting for the failed tasks)\n' "$last_merge"
		fi
	fi
	missing=$(missing_shards "$dir")
	[ -n "$missing" ] || fail "every shard has its output; nothing to rerun" "fanout.sh merge $dir merges them now"
	submit_jobs "$dir" "$missing"
	;;
task)
	[ $# -eq 1 ] || usage
	dir=$1
	load_run "$dir"
	k=${SLURM_ARRAY_TASK_ID:?fanout.sh task runs inside a Slurm array job}
	export SLUICE_WORKERS=${SLURM_CPUS_PER_TASK:-1}
	printf 'fanout: %s shard %s/%s on %s, job %s\n' "$kind" "$k" "$shards" "$(hostname)" "${SLURM_JOB_ID:-?}"
	if [ "$kind" = bootstrap ]; then
		"$sluice_bin" bootstrap "${flags[@]}" --quiet --shard "$k/$shards" --out "$dir/part-$k.jsonl"
	else
		"$sluice_bin" rehearse "${flags[@]}" --quiet --shard "$k/$shards" --dir "$dir/part-$k"
	fi
	;;
merge)
	[ $# -eq 1 ] || usage
	dir=$1
	load_run "$dir"
	parts=()
	for ((k = 1; k <= shards; k++)); do
		p=$(part_file "$dir" "$k")
		[ ! -f "$p" ] || parts+=("$p")
	done
	[ ${#parts[@]} -gt 0 ] || fail "no shard of $dir has output yet" "fanout.sh status $dir"
	# sluice checks that the parts are of one run and names a missing shard.
	if [ "$kind" = bootstrap ]; then
		ok=0; "$sluice_bin" merge --out "$dir/draws.jsonl" "${parts[@]}" || ok=$?
	else
		ok=0; "$sluice_bin" rehearse-merge --dir "$dir/rehearsal" "${parts[@]}" || ok=$?
	fi
	[ "$ok" -eq 0 ] || fail "merge of $dir failed" "if shards are missing: fanout.sh resubmit $dir"
	;;
*)
	usage
	;;
esac
