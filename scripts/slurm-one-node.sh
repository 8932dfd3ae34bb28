#!/usr/bin/env bash
# A real scheduler test: bring up a one-node Slurm cluster on this machine,
# submit studies/fuel.slurm (the example users are given) as its four-task
# job array, merge the four shards with `deltaprobe merge`, and check that
# summary.csv and verdicts.csv equal those of an unsharded `deltaprobe run`
# byte for byte. Prints one PASS or FAIL line at the end.
#
# Needs root: it installs Debian's slurm-wlm and munge when they are
# missing and runs the daemons as root. It touches no system
# configuration: the munge key, the slurm.conf, the sockets, the state and
# the logs all live in a scratch folder. When `unshare` allows it, the
# cluster runs in private network and process namespaces: the network has
# only loopback, so the daemons can neither clash with another Slurm's
# ports nor be reached from outside, and when the test's shell ends the
# kernel ends every process left in the namespace. Either way each daemon
# it starts is stopped on exit, whatever happens.
#
#   bash scripts/slurm-one-node.sh
#
# SLURM_ONE_NODE_KEEP=1 keeps the scratch folder after a pass (it is always
# kept after a failure, for the logs).
set -euo pipefail

# The daemons live in sbin, which a CI environment may leave off PATH.
export PATH="$PATH:/usr/sbin:/sbin"

say() { printf 'slurm-one-node: %s\n' "$*"; }
die() { say "error: $*" >&2; exit 1; }

# Runs "$@" in the background and waits for it. Bash runs a trap only
# after a foreground command ends, but interrupts `wait`: this way a TERM
# stops the test at once, and the cleanup ends the command (fg_pid).
fg_pid=
waitable() {
	local rc=0
	"$@" &
	fg_pid=$!
	wait "$fg_pid" || rc=$?
	fg_pid=
	return "$rc"
}

# in_dir DIR CMD...: CMD run from DIR, without changing ours.
in_dir() {
	cd "$1" && shift && "$@"
}

# A trap can fire inside a command whose output goes to a log file; the
# cleanup writes to the terminal again through copies kept in fds 8 and 9
# (which the daemons do not inherit).
exec 8>&1 9>&2
restore_output() {
	exec 1>&8 2>&9
}

# A signal ends the run through the EXIT trap, which stops what was started.
on_signal() {
	restore_output
	say "stopped by SIG$1" >&2
	exit "$2"
}
trap_signals() {
	trap 'on_signal TERM 143' TERM
	trap 'on_signal HUP 129' HUP
	trap 'on_signal INT 130' INT
}

# Ends the command waitable() was waiting for when a signal cut it short.
stop_foreground() {
	if [[ -n $fg_pid ]]; then
		kill -TERM "$fg_pid" 2>/dev/null
		wait "$fg_pid" 2>/dev/null
		fg_pid=
	fi
}

# Runs "$@" once a second until it succeeds; gives up after $1 seconds.
# $2 names what is awaited, for the error. Between tries it checks that
# the daemons are still alive, so a crashed daemon fails at once instead
# of at the timeout.
wait_until() {
	local limit=$1 what=$2 deadline
	shift 2
	deadline=$((SECONDS + limit))
	until "$@"; do
		if ((SECONDS >= deadline)); then
			die "$what: not within ${limit}s"
		fi
		daemons_alive
		sleep 1
	done
}

###########################################################################
# Inner part: the cluster. Runs in the private namespaces, as process 1
# there (or, when there are none, on the host's loopback), as
# `$0 --inner MODE WORK`.

pids=()  # daemons started, in start order: "name:pid"
in_private_ns=0

daemons_alive() {
	local entry
	for entry in "${pids[@]}"; do
		if ! kill -0 "${entry#*:}" 2>/dev/null; then
			die "${entry%%:*} (pid ${entry#*:}) has exited"
		fi
	done
}

# stop_daemon PID: TERM, up to 15 s for a clean exit, then KILL.
stop_daemon() {
	local pid=$1 i
	kill -TERM "$pid" 2>/dev/null || return 0
	for ((i = 0; i < 150; i++)); do
		kill -0 "$pid" 2>/dev/null || break
		sleep 0.1
	done
	kill -KILL "$pid" 2>/dev/null || true
	wait "$pid" 2>/dev/null || true
}

# In the private namespaces, any process still there after the daemons
# stop was started by them (a job step's slurmstepd, a task): end those by
# pid. The namespace's own /proc lists only its processes.
stop_strays() {
	local p name
	((in_private_ns)) || return 0
	# Never scan unless this shell is process 1 of its own namespace.
	[[ $$ == 1 ]] || return 0
	for p in /proc/[0-9]*; do
		p=${p#/proc/}
		[[ $p == "$$" || $p == "$BASHPID" ]] && continue
		name=$(tr '\0' ' ' <"/proc/$p/cmdline" 2>/dev/null) || true
		[[ -n $name ]] || continue # a zombie, or gone already
		say "stopping a leftover process $p: $name"
		kill -KILL "$p" 2>/dev/null || true
	done
}

show_logs() {
	local f
	# A daemon in the foreground copies its whole log to its .out file,
	# including what it says before it can open the log file.
	for f in "$work"/log/*.out "$work"/job/slurm-*.out; do
		[[ -f $f ]] || continue
		printf '\n----- last lines of %s -----\n' "$f" >&2
		tail -n 40 "$f" >&2
	done
}

inner_cleanup() {
	local rc=$? i entry
	set +e
	trap - EXIT
	restore_output
	stop_foreground
	# pids[1] is slurmctld: ask it only while it runs.
	if ((${#pids[@]} > 1)) && kill -0 "${pids[1]#*:}" 2>/dev/null; then
		# Cancel what may still be queued or running, and give slurmd a
		# moment to end the steps before it is stopped itself.
		timeout 15 scancel --quiet --user=root 2>/dev/null
		i=$((SECONDS + 30))
		while ((SECONDS < i)); do
			[[ -z $(timeout 10 squeue -h -o %i 2>/dev/null) ]] && break
			sleep 1
		done
	fi
	# Stop in reverse start order: slurmd, slurmctld, munged.
	for ((i = ${#pids[@]} - 1; i >= 0; i--)); do
		entry=${pids[i]}
		stop_daemon "${entry#*:}"
	done
	stop_strays
	if ((rc != 0)); then
		show_logs
	fi
	exit "$rc"
}

munge_ok() {
	munge -n -S "$work/munge/munge.socket" 2>/dev/null |
		unmunge -S "$work/munge/munge.socket" >/dev/null 2>&1
}

start_munge() {
	local dir=$work/munge
	# munged warns unless the socket's folder is open to all; the key
	# itself is 0600.
	mkdir -p "$dir"
	chmod 0755 "$work" "$dir"
	# A key of our own: the machine's /etc/munge/munge.key, if any, is left
	# alone, and so is a munged that may already serve it.
	if command -v mungekey >/dev/null; then
		mungekey --create --keyfile="$dir/munge.key"
	else
		dd if=/dev/urandom of="$dir/munge.key" bs=1 count=1024 status=none
	fi
	chown root:root "$dir/munge.key"
	chmod 0600 "$dir/munge.key"
	# --foreground keeps the pid ours to stop.
	munged --foreground \
		--key-file="$dir/munge.key" --socket="$dir/munge.socket" \
		--pid-file="$dir/munged.pid" --seed-file="$dir/munged.seed" \
		>>"$work/log/munged.out" 2>&1 8>&- 9>&- &
	pids+=("munged:$!")
	wait_until 30 "munged answering on its socket" munge_ok
	say "munged is up"
}

write_slurm_conf() {
	local hw
	# The node's real shape, as slurmd sees it, so that slurmctld accepts
	# it (a node that claims more than it has is drained). slurmd -C prints
	# "NodeName=... CPUs=... RealMemory=..." and then an UpTime line.
	hw=$(slurmd -C | head -n 1)
	hw=${hw#NodeName=* }
	[[ $hw == *CPUs=* && $hw == *RealMemory=* ]] || die "slurmd -C printed no hardware line: $hw"
	cat >"$conf" <<EOF
# Written by scripts/slurm-one-node.sh for one test; removed with it.
ClusterName=deltaprobe-test
SlurmctldHost=$node(127.0.0.1)
SlurmctldPort=6817
SlurmdPort=6818
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
AuthInfo=socket=$work/munge/munge.socket
CredType=cred/munge
MpiDefault=none
# No cgroups: the test machine may have none to give.
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
ReturnToService=2
MailProg=/bin/true
KillWait=5
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/run/slurmctld.pid
SlurmdPidFile=$work/run/slurmd.pid
SlurmctldLogFile=$work/log/slurmctld.log
SlurmdLogFile=$work/log/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
NodeName=$node NodeAddr=127.0.0.1 NodeHostname=$node $hw State=UNKNOWN
PartitionName=test Nodes=$node Default=YES MaxTime=INFINITE State=UP
EOF
}

node_idle() {
	[[ $(timeout 15 sinfo -h -N -n "$node" -o %T 2>/dev/null) == idle ]]
}

inner() {
	local mode=$1 t0 jobid rc f
	work=$2
	conf=$work/slurm.conf
	node=$(hostname -s)
	trap inner_cleanup EXIT
	trap_signals

	if [[ $mode == private ]]; then
		ip link set lo up
		# Slurm resolves its listening address with AI_ADDRCONFIG, which
		# glibc answers with nothing while 127.0.0.1 is the only IPv4
		# address; a second loopback address (on lo, so still reachable
		# from inside only) satisfies it.
		ip addr add 127.0.0.2/8 dev lo
		in_private_ns=1
		say "the cluster runs in private network and process namespaces (loopback only)"
	else
		say "no private namespaces here; the daemons use the host's loopback and ports 6817-6818"
	fi

	# Settings from a surrounding Slurm job or the user's shell would change
	# what sbatch and the jobs do; this test owns its cluster entirely.
	while read -r f; do
		unset "$f"
	done < <(compgen -e | grep -E '^(SLURM|SBATCH|SALLOC|SRUN|SQUEUE|SINFO)_' || true)
	export SLURM_CONF=$conf
	export PATH="$work/bin:$PATH"

	mkdir -p "$work"/{log,state,spool,run,job/studies}
	t0=$SECONDS
	start_munge
	write_slurm_conf
	slurmctld -D -f "$conf" >>"$work/log/slurmctld.out" 2>&1 8>&- 9>&- &
	pids+=("slurmctld:$!")
	slurmd -D -f "$conf" -N "$node" >>"$work/log/slurmd.out" 2>&1 8>&- 9>&- &
	pids+=("slurmd:$!")
	wait_until 120 "node $node idle in sinfo" node_idle
	say "cluster up in $((SECONDS - t0))s: $(timeout 15 sinfo -h -o '%P %D node(s) %T' | head -n 1)"

	# The batch script names studies/fuel.toml relative to its working
	# folder: give it a folder of its own with a copy of the study, so that
	# nothing lands in the repository. The script itself is the
	# repository's, unchanged; only where it runs and logs is overridden.
	cp "$repo/studies/fuel.toml" "$work/job/studies/fuel.toml"
	t0=$SECONDS
	rc=0
	waitable timeout 300 sbatch --wait --parsable --chdir="$work/job" \
		--output="$work/job/slurm-%A_%a.out" "$repo/studies/fuel.slurm" \
		>"$work/log/sbatch.out" 2>&1 || rc=$?
	jobid=$(head -n 1 "$work/log/sbatch.out")
	jobid=${jobid%%;*} # --parsable prints "id" or "id;cluster"
	if ((rc == 124)); then
		die "the job array ${jobid} did not finish within 300s"
	elif ((rc != 0)); then
		die "job array ${jobid} failed: sbatch --wait exited $rc (the tasks' output is below)"
	fi
	say "job array $jobid finished in $((SECONDS - t0))s"

	local parts=("$work"/job/out/fuel-shards/part-*)
	if ((${#parts[@]} != 4)); then
		die "expected 4 part folders (--array=0-3 in studies/fuel.slurm), found ${#parts[@]}"
	fi
	for f in "${parts[@]}"; do
		[[ -s $f/result.json ]] || die "$f has no result.json"
	done

	waitable timeout 300 deltaprobe merge -o "$work/merged" "${parts[@]}" \
		>"$work/log/merge.out" 2>&1 ||
		die "deltaprobe merge failed: $(tail -n 5 "$work/log/merge.out")"
	waitable in_dir "$work/job" timeout 300 deltaprobe run studies/fuel.toml -o "$work/whole" -quiet \
		>"$work/log/whole.out" 2>&1 ||
		die "the unsharded run failed: $(tail -n 5 "$work/log/whole.out")"
	for f in summary.csv verdicts.csv; do
		cmp "$work/merged/$f" "$work/whole/$f" ||
			die "$f of the merged shards differs from the unsharded run"
		say "$f: merged shards and unsharded run are byte-identical"
	done
}

###########################################################################
# Outer part: install, build, then run the inner part and report.

install_if_missing() {
	local c missing=() made_policy=0 rc=0
	for c in munged munge unmunge slurmctld slurmd sbatch sinfo squeue scancel; do
		command -v "$c" >/dev/null || missing+=("$c")
	done
	if ((${#missing[@]} == 0)); then
		say "slurm and munge are installed; no install step"
		return 0
	fi
	say "installing slurm-wlm and munge (missing: ${missing[*]})"
	# Package scripts would start the system's own munge and slurm
	# services; this test runs private daemons, so forbid service starts
	# during the install (exit 101 is "action forbidden" for invoke-rc.d
	# and deb-systemd-invoke). An existing policy is left as it is.
	if [[ ! -e /usr/sbin/policy-rc.d ]]; then
		printf '#!/bin/sh\nexit 101\n' >/usr/sbin/policy-rc.d
		chmod 0755 /usr/sbin/policy-rc.d
		made_policy=1
	fi
	# In the foreground on purpose: a signal waits until apt-get is done
	# rather than cut dpkg off halfway.
	{
		timeout 600 apt-get update -q &&
			DEBIAN_FRONTEND=noninteractive timeout 900 \
				apt-get install -y -q --no-install-recommends slurm-wlm munge
	} >"$scratch/apt.log" 2>&1 || rc=$?
	if ((made_policy)); then
		rm -f /usr/sbin/policy-rc.d
	fi
	if ((rc != 0)); then
		tail -n 30 "$scratch/apt.log" >&2
		die "apt-get failed (exit $rc)"
	fi
	for c in "${missing[@]}"; do
		command -v "$c" >/dev/null || die "$c is still missing after the install"
	done
}

# Asks the inner part to stop and waits for its cleanup. `unshare --fork`
# ignores TERM itself, so the signal goes to its child, the test's shell.
stop_inner() {
	local target=$inner_pid p
	if [[ $mode == private ]]; then
		target=$(cat "/proc/$inner_pid/task/$inner_pid/children" 2>/dev/null) || true
	fi
	for p in $target; do
		kill -TERM "$p" 2>/dev/null
	done
	wait "$inner_pid" 2>/dev/null
}

outer_cleanup() {
	local rc=$?
	set +e
	trap - EXIT
	restore_output
	stop_foreground
	if [[ -n ${inner_pid:-} ]] && kill -0 "$inner_pid" 2>/dev/null; then
		stop_inner
	fi
	if ((rc == 0)); then
		say "PASS: merged Slurm array shards equal the unsharded run (${SECONDS}s in all${timings})"
		if [[ -z ${SLURM_ONE_NODE_KEEP:-} ]]; then
			rm -rf "$scratch"
		else
			say "kept $scratch"
		fi
	else
		say "FAIL after ${SECONDS}s (exit $rc); logs and outputs kept in $scratch" >&2
	fi
	exit "$rc"
}

outer() {
	local t0 rc
	if [[ $(id -u) != 0 ]]; then
		say "FAIL: run as root; the test installs packages and runs the Slurm daemons as root" >&2
		exit 1
	fi
	scratch=$(mktemp -d "${TMPDIR:-/tmp}/deltaprobe-slurm.XXXXXX")
	timings=
	trap outer_cleanup EXIT
	# A signal ends the inner part first (its own trap stops the daemons).
	trap_signals

	t0=$SECONDS
	install_if_missing
	timings+=", install check $((SECONDS - t0))s"

	t0=$SECONDS
	mkdir -p "$scratch/bin"
	waitable in_dir "$repo" timeout 600 go build -o "$scratch/bin/deltaprobe" ./cmd/deltaprobe ||
		die "go build failed"
	timings+=", build $((SECONDS - t0))s"

	# Private namespaces when the kernel and our privileges allow them;
	# otherwise the host's loopback. --mount-proc gives the inner part a
	# /proc of its own namespace; --kill-child ends it if unshare is killed.
	mode=host
	if command -v unshare >/dev/null && command -v ip >/dev/null &&
		unshare "${private_ns[@]}" true 2>/dev/null; then
		mode=private
	fi
	t0=$SECONDS
	if [[ $mode == private ]]; then
		unshare "${private_ns[@]}" --kill-child=TERM -- bash "$self" --inner "$mode" "$scratch" &
	else
		bash "$self" --inner "$mode" "$scratch" &
	fi
	inner_pid=$!
	rc=0
	wait "$inner_pid" || rc=$?
	inner_pid=
	timings+=", cluster and test $((SECONDS - t0))s"
	return "$rc"
}

mode=host
private_ns=(--net --pid --fork --mount-proc)
self=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)/$(basename "${BASH_SOURCE[0]}")
repo=$(cd "$(dirname "$self")/.." && pwd)
if [[ ${1:-} == --inner ]]; then
	inner "$2" "$3"
else
	outer
fi
