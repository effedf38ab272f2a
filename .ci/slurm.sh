#!/usr/bin/env bash
# CI step: sharded sluice runs on a real Slurm cluster.
#
# Starts a throwaway single-node cluster on localhost (munged, slurmctld and
# slurmd, config and state in a temporary directory, ports picked free),
# runs a bootstrap (4 shards) and a rehearsal (3 shards) as array jobs
# through examples/slurm/fanout.sh with one task of each failing once,
# checks that the merges name the missing shards, resubmits exactly those
# tasks, and checks that the merged files equal the unsharded runs byte for
# byte. The daemons it started are stopped by PID on every exit (trap);
# on failure their logs and the jobs' logs are printed.
#
# Needs root (the daemons run as root) and Debian's slurm-wlm and munge,
# installed here when missing. Every wait is bounded (FANOUT_CI_WAIT
# seconds, default 240). FANOUT_CI_KEEP=1 keeps the temporary directory.
#
#   .ci/slurm.sh            the CI check above (about 20 s)
#   .ci/slurm.sh scale      the sizing study of the README ("Running beyond
#                           one machine"): FANOUT_SCALE_DRAWS (default 8000)
#                           replicates of the invented 312-week, 12-channel
#                           panel, unsharded and as 1 task and as one task
#                           per CPU on the same node; wall times, merged =
#                           unsharded checked (tens of minutes)
set -euo pipefail
cd "$(dirname "$0")/.."
repo=$(pwd)
mode=${1:-check}
case $mode in
check) wait_limit=${FANOUT_CI_WAIT:-240} ;;
scale) wait_limit=${FANOUT_CI_WAIT:-5400} ;;
*)
	echo "usage: .ci/slurm.sh [scale]" >&2
	exit 2
	;;
esac
started=$(date +%s)

say() { printf '== slurm: %s\n' "$*"; }
die() {
	printf 'slurm CI FAILED: %s\n' "$*" >&2
	exit 1
}

[ "$(id -u)" -eq 0 ] || die "must run as root (it starts munged, slurmctld and slurmd)"

# --- packages -----------------------------------------------------------
need=()
for c in munged mungekey; do command -v "$c" >/dev/null || need+=(munge); done
for c in slurmctld slurmd sbatch squeue scontrol scancel sinfo; do
	command -v "$c" >/dev/null || need+=(slurm-wlm)
done
if [ ${#need[@]} -gt 0 ]; then
	mapfile -t need < <(printf '%s\n' "${need[@]}" | sort -u)
	say "installing ${need[*]}"
	export DEBIAN_FRONTEND=noninteractive
	# Keep the packages' own services from starting: this script runs its
	# own daemons and must leave none behind. Debian's policy-rc.d hook.
	made_policy=
	if [ ! -e /usr/sbin/policy-rc.d ]; then
		printf '#!/bin/sh\nexit 101\n' >/usr/sbin/policy-rc.d
		chmod 755 /usr/sbin/policy-rc.d
		made_policy=1
	fi
	rc=0
	{ apt-get update -qq && apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null; } || rc=$?
	[ -z "$made_policy" ] || rm -f /usr/sbin/policy-rc.d
	[ "$rc" -eq 0 ] || die "apt-get install ${need[*]} failed (exit $rc)"
fi
say "$(slurmctld -V), $(munged -V 2>&1 | head -n1)"

# --- temporary cluster --------------------------------------------------
work=$(mktemp -d "${TMPDIR:-/tmp}/sluice-slurm.XXXXXX")
chmod 700 "$work"
mkdir -p "$work"/{munge,etc,state,spool,log,bin,data,runs,ref}
export SLURM_CONF=$work/etc/slurm.conf
pids=()  # daemons started here, in start order
names=()

print_logs() {
	local f
	# The daemons run in the foreground: their logs are log/NAME.out.
	for f in "$work"/log/*.log "$work"/log/*.out "$work"/runs/*/logs/*.out; do
		[ -s "$f" ] || continue
		printf -- '----- %s (last 40 lines)\n' "${f#"$work"/}"
		tail -n 40 "$f"
	done
	if [ ${#pids[@]} -ge 2 ]; then
		printf -- '----- scontrol show jobs\n'
		timeout 10 scontrol -o show jobs 2>&1 | tr ' ' '\n' |
			awk -F= '$1 == "JobId" && line {print line; line = ""}
				$1 ~ /^(JobId|ArrayTaskId|JobName|JobState|Reason|Dependency|ExitCode)$/ {line = line " " $0}
				END {if (line) print line}' | tail -n 40 || true
		printf -- '----- sinfo\n'
		timeout 10 sinfo -N -l 2>&1 || true
	fi
}

stop_daemons() {
	local i pid t
	# Cancel our jobs first so no slurmstepd outlives slurmd.
	if [ ${#pids[@]} -ge 2 ]; then
		timeout 10 scancel --quiet --full --user=root 2>/dev/null || true
		for ((t = 0; t < 20; t++)); do
			[ -z "$(timeout 5 squeue -h 2>/dev/null)" ] && break
			sleep 0.5
		done
	fi
	for ((i = ${#pids[@]} - 1; i >= 0; i--)); do
		pid=${pids[i]}
		kill -TERM "$pid" 2>/dev/null || continue
		for ((t = 0; t < 40; t++)); do
			kill -0 "$pid" 2>/dev/null || break
			sleep 0.25
		done
		if kill -0 "$pid" 2>/dev/null; then
			printf 'slurm CI: %s (pid %s) did not stop in 10 s; killing it\n' "${names[i]}" "$pid" >&2
			kill -KILL "$pid" 2>/dev/null || true
		fi
		wait "$pid" 2>/dev/null || true
	done
	pids=()
}

cleanup() {
	local rc=$?
	trap - EXIT INT TERM
	set +e
	if [ "$rc" -ne 0 ]; then
		printf 'slurm CI: exit %s after %s s; logs follow\n' "$rc" "$(($(date +%s) - started))" >&2
		print_logs >&2
	fi
	stop_daemons
	if [ -n "${FANOUT_CI_KEEP:-}" ]; then
		printf 'slurm CI: kept %s\n' "$work" >&2
	else
		rm -rf "$work"
	fi
	exit "$rc"
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

# start NAME CMD...: run a daemon in the foreground of a background job, so
# its PID is ours to stop.
start() {
	local name=$1
	shift
	"$@" >"$work/log/$name.out" 2>&1 &
	pids+=("$!")
	names+=("$name")
}

# wait_for WHAT CMD...: retry CMD (quietly) until it succeeds, at most
# wait_limit seconds; fail if a daemon we started has died meanwhile.
wait_for() {
	local what=$1 deadline=$(($(date +%s) + wait_limit)) i
	shift
	until "$@" >/dev/null 2>&1; do
		for i in "${!pids[@]}"; do
			kill -0 "${pids[i]}" 2>/dev/null || die "${names[i]} (pid ${pids[i]}) exited while waiting for $what"
		done
		[ "$(date +%s)" -lt "$deadline" ] || die "no $what after $wait_limit s"
		sleep 0.5
	done
}

# free_port: a TCP port on 127.0.0.1 that nothing listens on, below
# Linux's ephemeral range (32768 up) so no outgoing connection holds it.
free_port() {
	local p
	for ((p = 20000 + ($$ * 7 + RANDOM) % 12000; ; p++)); do
		[ "$p" -lt 32000 ] || p=20000
		if ! (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null && [[ " ${used_ports:-} " != *" $p "* ]]; then
			used_ports="${used_ports:-} $p"
			printf '%s' "$p"
			return
		fi
	done
}

say "munged"
mungekey --create --keyfile="$work/munge/munge.key" >/dev/null 2>&1 ||
	{ dd if=/dev/urandom of="$work/munge/munge.key" bs=1024 count=1 2>/dev/null; }
chmod 600 "$work/munge/munge.key"
socket=$work/munge/munge.socket
start munged munged --foreground --force --key-file="$work/munge/munge.key" --socket="$socket" \
	--pid-file="$work/munge/munged.pid" --seed-file="$work/munge/munged.seed" --log-file="$work/log/munged.log"
wait_for "munge credential" sh -c "munge -n -S '$socket' | unmunge -S '$socket'"

host=$(hostname -s)
node=sluicenode
# The node's layout as slurmd sees it, so slurmd does not drain it for a
# mismatch; RealMemory is left out (memory is not a consumable here).
layout=$(slurmd -C | head -n1 | tr ' ' '\n' | grep -E '^(CPUs|Boards|SocketsPerBoard|CoresPerSocket|ThreadsPerCore)=' | tr '\n' ' ')
cpus=$(printf '%s' "$layout" | tr ' ' '\n' | sed -n 's/^CPUs=//p')
ctld_port=$(free_port)
slurmd_port=$(free_port)
: >"$work/etc/plugstack.conf"
cat >"$SLURM_CONF" <<EOF
# Throwaway single-node cluster of .ci/slurm.sh
ClusterName=sluiceci
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$ctld_port
SlurmdPort=$slurmd_port
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$socket
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmctldDebug=info
SlurmdDebug=info
PlugStackConfig=$work/etc/plugstack.conf
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
MpiDefault=none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
ReturnToService=2
MinJobAge=3600
KillWait=5
SlurmctldTimeout=30
SlurmdTimeout=30
InactiveLimit=0
NodeName=$node NodeAddr=127.0.0.1 NodeHostname=$host $layout State=UNKNOWN
PartitionName=ci Nodes=$node Default=YES MaxTime=120 State=UP
EOF
say "slurmctld (port $ctld_port) and slurmd (port $slurmd_port), node $node with $cpus CPUs"
start slurmctld slurmctld -D -f "$SLURM_CONF"
wait_for "answer from slurmctld" scontrol ping
start slurmd slurmd -D -N "$node" -f "$SLURM_CONF"
node_idle() { [ "$(sinfo -h -n "$node" -o %t)" = idle ]; }
wait_for "idle node" node_idle

say "building sluice"
go build -o "$work/bin/sluice" ./cmd/sluice
sluice=$work/bin/sluice
fanout=$repo/examples/slurm/fanout.sh

# job_states ID: "TASK STATE" per task of job ID (Slurm keeps finished jobs
# for MinJobAge, so the states of finished tasks are there to read).
job_states() {
	scontrol -o show job "$1" | tr ' ' '\n' | awk -F= '
		$1 == "JobId" {id = $2} $1 == "ArrayTaskId" {task = $2}
		$1 == "JobState" {print (task == "" ? id : task), $2; task = ""}'
}
# finished ID...: every task of every job ID has ended.
finished() {
	local id
	for id; do
		job_states "$id" | awk '$2 ~ /^(PENDING|RUNNING|CONFIGURING|COMPLETING|SUSPENDED|REQUEUED|RESIZING)$/ {busy = 1} END {exit busy}' || return 1
	done
}
# job_id RUN WHAT N: the N-th (1-based) job of kind WHAT in RUN/jobs.
job_id() { awk -v w="$2" -v n="$3" '$1 == w && ++c == n {print $2}' "$work/runs/$1/jobs"; }
# expect_states ID WANT: the tasks' states, sorted, must be WANT.
expect_states() {
	local got
	got=$(job_states "$1" | sort -n | tr '\n' ' ')
	[ "$got" = "$2" ] || die "job $1: tasks ended as [$got], want [$2]"
}
now() { date +%s.%N; }
secs() { awk -v a="$1" -v b="$2" 'BEGIN {printf "%.1f", b - a}'; }

if [ "$mode" = scale ]; then
	draws=${FANOUT_SCALE_DRAWS:-8000}
	say "scale: $draws replicates of the 312-week, 12-channel panel; $cpus CPUs; load $(cut -d' ' -f1-3 /proc/loadavg)"
	"$sluice" simulate --truth "$repo/examples/slurm/panel-312x12.yaml" --dir "$work/data" >/dev/null
	channels=$(head -n1 "$work/data/weekly.csv" | tr ',' '\n' | grep '^c[0-9]' | paste -sd, -)
	big=(--data "$work/data/weekly.csv" --kpi sales --channels "$channels" --controls price_index,promo
		--bootstrap-draws "$draws" --seed 7)
	export SLUICE_BIN=$sluice
	t0=$(now)
	"$sluice" bootstrap "${big[@]}" --workers "$cpus" --quiet --out "$work/ref/draws.jsonl"
	t1=$(now)
	rows=("unsharded, one process, --workers $cpus|$(secs "$t0" "$t1")|-|-")
	say "unsharded: $(secs "$t0" "$t1") s; load $(cut -d' ' -f1-3 /proc/loadavg)"
	for shape in "1 $cpus" "$cpus 1"; do
		read -r n per <<<"$shape"
		cd "$work/runs"
		t0=$(now)
		FANOUT_CPUS=$per "$fanout" submit bootstrap "$n" "scale-$n" "${big[@]}" >/dev/null
		cd "$repo"
		wait_for "end of the $n-task run" finished "$(job_id "scale-$n" merge 1)"
		t1=$(now)
		expect_states "$(job_id "scale-$n" merge 1)" "$(job_id "scale-$n" merge 1) COMPLETED "
		cmp "$work/runs/scale-$n/draws.jsonl" "$work/ref/draws.jsonl" || die "$n-task merge differs from the unsharded run"
		# Longest task and the merge, from Slurm's start and end times (1 s resolution).
		span() {
			local a b m=0
			while read -r a b; do
				a=$(($(date -d "$b" +%s) - $(date -d "$a" +%s)))
				[ "$a" -le "$m" ] || m=$a
			done < <(scontrol -o show job "$1" | tr ' ' '\n' | awk -F= '
				$1 == "StartTime" {a = $2} $1 == "EndTime" {print a, $2}')
			printf '%s' "$m"
		}
		rows+=("Slurm: $n task(s) x $per CPU, merge after afterok|$(secs "$t0" "$t1")|$(span "$(job_id "scale-$n" tasks 1)")|$(span "$(job_id "scale-$n" merge 1)")")
		say "$n task(s): $(secs "$t0" "$t1") s; load $(cut -d' ' -f1-3 /proc/loadavg)"
	done
	# The fixed costs the paper model needs: a task's start (read the
	# panel, the full fit, one replicate) and the merge, each run alone.
	t0=$(now)
	"$sluice" bootstrap "${big[@]/#$draws/1}" --workers 1 --quiet --out "$work/ref/one.jsonl"
	t1=$(now)
	startup=$(secs "$t0" "$t1")
	t0=$(now)
	"$sluice" merge --out "$work/ref/merged.jsonl" "$work/runs/scale-$cpus"/part-*.jsonl >/dev/null
	t1=$(now)
	merge=$(secs "$t0" "$t1")
	cmp "$work/ref/merged.jsonl" "$work/ref/draws.jsonl" || die "local merge differs"
	say "fixed costs: a task's start (fit + 1 replicate, 1 worker) $startup s; merge of $cpus parts $merge s"
	printf '\n| %s | %s | %s | %s |\n|---|---|---|---|\n' "run ($draws replicates, 312 weeks x 12 channels)" "wall s, submit to merged" "longest task s" "merge s"
	for r in "${rows[@]}"; do
		IFS='|' read -r a b c d <<<"$r"
		printf '| %s | %s | %s | %s |\n' "$a" "$b" "$c" "$d"
	done
	printf '\nfixed costs, each alone: start of a task (read, full fit, 1 replicate; 1 worker) %s s; sluice merge of %s parts %s s\n' \
		"$startup" "$cpus" "$merge"
	printf '%s CPUs (%s), load average at the end %s; merged files equal the unsharded file byte for byte\n' \
		"$cpus" "$(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //')" "$(cut -d' ' -f1-3 /proc/loadavg)"
	exit 0
fi

# --- the CI check -------------------------------------------------------
# The jobs run sluice through a wrapper that fails once for one shard of
# each run, as a node fault would; the marker files make it fail only once.
cat >"$work/bin/flaky-sluice" <<EOF
#!/bin/sh
prev=
for a in "\$@"; do
	if [ "\$prev" = --shard ]; then
		case "\$1/\$a" in
		bootstrap/3/4) m=$work/fail-bootstrap ;;
		rehearse/2/3) m=$work/fail-rehearse ;;
		*) m= ;;
		esac
		if [ -n "\$m" ] && rm "\$m" 2>/dev/null; then
			echo "flaky-sluice: simulated failure of \$1 shard \$a" >&2
			exit 3
		fi
	fi
	prev=\$a
done
exec $work/bin/sluice "\$@"
EOF
chmod 755 "$work/bin/flaky-sluice"
touch "$work/fail-bootstrap" "$work/fail-rehearse"
export SLUICE_BIN=$work/bin/flaky-sluice

model=(--data "$repo/examples/weekly.csv" --kpi revenue --channels search,social,tv,online_video,display,audio
	--controls price_index,promo --starts 3)
boot=("${model[@]}" --bootstrap-draws 48 --seed 7)
reh=("${model[@]}" --plan "$repo/examples/plan.yaml" --policy standard --policy cautious --worlds 6 --seed 5
	--base-draws 12 --world-draws 12 --world-replicates 3)

# Submit from the run's parent directory: jobs start there.
cd "$work/runs"
"$fanout" submit bootstrap 4 boot "${boot[@]}"
"$fanout" submit rehearse 3 reh "${reh[@]}"
cd "$repo"

say "unsharded runs, for reference"
"$sluice" bootstrap "${boot[@]}" --quiet --workers 1 --out "$work/ref/draws.jsonl"
"$sluice" rehearse "${reh[@]}" --quiet --workers 1 --dir "$work/ref/rehearsal" >/dev/null

say "waiting for the array jobs (at most $wait_limit s)"
wait_for "end of both array jobs" finished "$(job_id boot tasks 1)" "$(job_id reh tasks 1)"
expect_states "$(job_id boot tasks 1)" "1 COMPLETED 2 COMPLETED 3 FAILED 4 COMPLETED "
expect_states "$(job_id reh tasks 1)" "1 COMPLETED 2 FAILED 3 COMPLETED "
grep -q 'simulated failure of bootstrap shard 3/4' "$work/runs/boot/logs/task-3.out" || die "task 3's log does not show its failure"
# The merges wait for tasks that will never all succeed.
# Slurm marks that at its next look at the queue.
never_satisfied() { [ "$(squeue -h -j "$1" -o %r)" = DependencyNeverSatisfied ]; }
for run in boot reh; do
	wait_for "DependencyNeverSatisfied for the merge job of $run" never_satisfied "$(job_id "$run" merge 1)"
done

say "merging by hand names the missing shard"
status=$("$fanout" status "$work/runs/boot")
[[ $status == *"without output: 3"* ]] || die "status: $status"
if out=$("$fanout" merge "$work/runs/boot" 2>&1); then die "bootstrap merge with shard 3 missing succeeded"; fi
[[ $out == *"shard 3/4 is missing"* ]] || die "bootstrap merge did not name shard 3/4: $out"
if out=$("$fanout" merge "$work/runs/reh" 2>&1); then die "rehearsal merge with shard 2 missing succeeded"; fi
[[ $out == *"shard 2/3 is missing"* ]] || die "rehearsal merge did not name shard 2/3: $out"
[ ! -e "$work/runs/boot/draws.jsonl" ] && [ ! -e "$work/runs/reh/rehearsal" ] || die "a failed merge wrote output"

say "resubmitting the failed shards only"
"$fanout" resubmit "$work/runs/boot"
"$fanout" resubmit "$work/runs/reh"
[ "$(awk '$1 == "tasks" {a = $3} END {print a}' "$work/runs/boot/jobs")" = 3 ] || die "bootstrap resubmission is not shard 3 alone"
[ "$(awk '$1 == "tasks" {a = $3} END {print a}' "$work/runs/reh/jobs")" = 2 ] || die "rehearsal resubmission is not shard 2 alone"
wait_for "end of the merge jobs" finished "$(job_id boot merge 2)" "$(job_id reh merge 2)"
expect_states "$(job_id boot tasks 2)" "3 COMPLETED "
expect_states "$(job_id reh tasks 2)" "2 COMPLETED "
expect_states "$(job_id boot merge 2)" "$(job_id boot merge 2) COMPLETED "
expect_states "$(job_id reh merge 2)" "$(job_id reh merge 2) COMPLETED "
[ "$(job_states "$(job_id boot merge 1)" | awk '{print $2}')" = CANCELLED ] || die "the first bootstrap merge job was not cancelled"

say "merged files against the unsharded runs"
cmp "$work/runs/boot/draws.jsonl" "$work/ref/draws.jsonl" || die "merged draws differ from the unsharded run"
cmp "$work/runs/reh/rehearsal/rehearsal.json" "$work/ref/rehearsal/rehearsal.json" || die "merged rehearsal.json differs"
cmp "$work/runs/reh/rehearsal/rehearsal.html" "$work/ref/rehearsal/rehearsal.html" || die "merged rehearsal.html differs"
n=$(($(wc -l <"$work/runs/boot/draws.jsonl") - 1))
[ "$n" -eq 48 ] || die "merged draws hold $n replicates, want 48"

say "ok: 4 + 3 shards, one failure each, resubmitted alone; merged = unsharded, byte for byte ($(($(date +%s) - started)) s)"
