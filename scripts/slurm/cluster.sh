#!/usr/bin/env bash
# A throw-away one-node Slurm cluster on 127.0.0.1 for testing memix scans,
# for machines without systemd (CI containers, developer VMs). Run as root.
#
#   cluster.sh start DIR   install slurm-wlm and munge if missing (through
#                          scripts/setup.sh --slurm), write DIR/slurm.conf,
#                          start munged, slurmctld and slurmd, wait until the
#                          node is idle; the daemons' PIDs go to DIR/pids.
#                          Prints "export SLURM_CONF=DIR/slurm.conf".
#   cluster.sh stop DIR    stop the daemons listed in DIR/pids by their PIDs
#                          (slurmd and slurmctld, then munged); waits for them.
#   cluster.sh exec DIR -- CMD ...
#                          start, run CMD with SLURM_CONF set, stop (always).
#
# With CLUSTER_OWNER_PID set, start also leaves a watchdog that stops the
# daemons once that process has gone, so that a test killed before its
# cleanup (a timeout, SIGKILL) leaves nothing running; stop ends it too.
#
# Nothing outside DIR is changed except the packages: the cluster has its own
# munge socket, state, spool, pid and log files under DIR, and its own ports
# (SLURMCTLD_PORT, SLURMD_PORT; defaults 16817 and 16818), so it does not
# touch /etc/slurm or a munged that the machine may already run. No cgroups,
# no accounting (so no sacct), process tracking by /proc.
#
# DIR must be reachable by the munge and slurm users: start makes DIR itself
# mode 0755 and checks that every parent directory can be traversed.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"

die() { echo "slurm cluster: $*" >&2; exit 1; }

usage() {
	echo "usage: $0 start DIR | stop DIR | exec DIR -- CMD [ARGS...]" >&2
	exit 2
}

# alive PID: the process exists and is not a zombie (in "exec" mode the
# daemons are this shell's children and stay zombies until it exits).
alive() {
	local st
	st="$(sed -n 's/.*) \(.\).*/\1/p' "/proc/$1/stat" 2>/dev/null)"
	[ -n "$st" ] && [ "$st" != Z ]
}

# stop_daemons DIR: SIGTERM the recorded PIDs, slurmd and slurmctld together
# and then munged (the Slurm daemons may still need it while they stop);
# each gets 10 s before SIGKILL. Only PIDs that this script recorded are
# signalled.
stop_daemons() {
	local dir="$1" group name pid i any ctld
	[ -f "$dir/pids" ] || return 0
	# Jobs still in the queue are cancelled first: their slurmstepd and
	# job processes would outlive slurmd. Waits up to 15 s for the queue
	# to empty (at once when it is empty already).
	ctld="$(awk '$1 == "slurmctld" { print $2 }' "$dir/pids")"
	if [ -n "$ctld" ] && alive "$ctld" && [ -f "$dir/slurm.conf" ]; then
		export SLURM_CONF="$dir/slurm.conf"
		if [ -n "$(timeout 5 squeue -h -o %i 2>/dev/null)" ]; then
			timeout 5 scancel --partition=debug 2>/dev/null || true
			for ((i = 0; i < 150; i++)); do
				[ -n "$(timeout 5 squeue -h -o %i 2>/dev/null)" ] || break
				sleep 0.1
			done
		fi
	fi
	for group in watchdog "slurmd slurmctld" "munged"; do
		local pids=()
		for name in $group; do
			pid="$(awk -v n="$name" '$1 == n { print $2 }' "$dir/pids")"
			[ -n "$pid" ] || continue
			[ "$pid" != "$BASHPID" ] || continue # the watchdog stopping the rest
			alive "$pid" || continue
			kill -TERM "$pid" 2>/dev/null || true
			pids+=("$pid")
		done
		for ((i = 0; i < 200; i++)); do
			any=0
			for pid in "${pids[@]}"; do
				if alive "$pid"; then any=1; fi
			done
			[ "$any" -eq 1 ] || break
			sleep 0.05
		done
		for pid in "${pids[@]}"; do
			if alive "$pid"; then
				echo "slurm cluster: pid $pid ignored SIGTERM for 10 s; sending SIGKILL" >&2
				kill -KILL "$pid" 2>/dev/null || true
			fi
		done
	done
	rm -f "$dir/pids"
}

# wait_for DESC SECONDS CMD...: retry CMD every 0.1 s until it succeeds.
wait_for() {
	local desc="$1" secs="$2" i
	shift 2
	for ((i = 0; i < secs * 10; i++)); do
		if "$@" >/dev/null 2>&1; then return 0; fi
		sleep 0.1
	done
	return 1
}

start_cluster() {
	local dir="$1"
	[ "$(id -u)" -eq 0 ] || die "must run as root (munged runs as the munge user, slurmd as root)"
	"$root/scripts/setup.sh" --slurm
	for cmd in munged munge unmunge slurmctld slurmd sinfo setpriv; do
		command -v "$cmd" >/dev/null 2>&1 || die "'$cmd' is not on PATH after installing slurm-wlm and munge"
	done
	getent passwd munge >/dev/null || die "the munge package created no 'munge' user"
	getent passwd slurm >/dev/null || die "the slurm packages created no 'slurm' user"

	mkdir -p "$dir"
	dir="$(cd "$dir" && pwd)"
	[ ! -f "$dir/pids" ] || die "$dir/pids exists: a cluster may still run there; stop it first ($0 stop $dir)"
	chmod 0755 "$dir"
	local p="$dir"
	while [ "$p" != "/" ]; do
		p="$(dirname "$p")"
		setpriv --reuid=munge --regid=munge --init-groups test -x "$p" ||
			die "the munge user cannot traverse $p; choose a DIR whose parents are world-searchable (e.g. under /tmp)"
	done

	local host
	host="$(hostname -s)"
	if ! getent hosts "$host" >/dev/null; then
		echo "127.0.0.1 $host" >>/etc/hosts
	fi
	local ctld_port="${SLURMCTLD_PORT:-16817}" slurmd_port="${SLURMD_PORT:-16818}"

	mkdir -p "$dir/munge" "$dir/state" "$dir/spool" "$dir/log"
	chown munge:munge "$dir/munge"
	chmod 0755 "$dir/munge"
	chown slurm:slurm "$dir/state" "$dir/log"
	chmod 0755 "$dir/log"
	if [ ! -f /etc/munge/munge.key ]; then
		# Debian's package normally creates the key; make one if it did not.
		mkdir -p /etc/munge
		dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 status=none
		chown munge:munge /etc/munge/munge.key
		chmod 0400 /etc/munge/munge.key
	fi
	local sock="$dir/munge/munge.socket"

	# The node line as slurmd itself measures it avoids a socket/core mismatch.
	local node
	node="$(slurmd -C | head -n 1)"
	cat >"$dir/slurm.conf" <<EOF
# One-node test cluster written by scripts/slurm/cluster.sh; throw-away.
ClusterName=memixtest
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$ctld_port
SlurmdPort=$slurmd_port
SlurmUser=slurm
AuthType=auth/munge
AuthInfo=socket=$sock
CredType=cred/munge
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/log/slurmctld.log
SlurmdLogFile=$dir/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
MpiDefault=none
MailProg=/bin/true
ReturnToService=2
MinJobAge=600
JobRequeue=1
KillWait=10
$node NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
	: >"$dir/pids"

	# From here on a failure stops whatever was started.
	trap 'stop_daemons "$dir"' ERR

	setpriv --reuid=munge --regid=munge --init-groups \
		munged -F --socket="$sock" --pid-file="$dir/munge/munged.pid" \
		--log-file="$dir/munge/munged.log" --seed-file="$dir/munge/munged.seed" \
		</dev/null >"$dir/log/munged.out" 2>&1 &
	echo "munged $!" >>"$dir/pids"
	if ! wait_for munged 10 bash -c "munge -n -S '$sock' | unmunge -S '$sock'"; then
		cat "$dir/log/munged.out" "$dir/munge/munged.log" >&2 2>/dev/null || true
		stop_daemons "$dir"
		die "munged did not answer within 10 s"
	fi

	export SLURM_CONF="$dir/slurm.conf"
	slurmctld -D -f "$SLURM_CONF" </dev/null >"$dir/log/slurmctld.out" 2>&1 &
	echo "slurmctld $!" >>"$dir/pids"
	slurmd -D -f "$SLURM_CONF" </dev/null >"$dir/log/slurmd.out" 2>&1 &
	echo "slurmd $!" >>"$dir/pids"

	# Ready when the node reports idle.
	if ! wait_for slurm 30 bash -c "sinfo -h -N -o '%T' | grep -qx idle"; then
		sinfo -N 2>&1 | sed 's/^/  sinfo: /' >&2 || true
		tail -n 20 "$dir/log/slurmctld.log" "$dir/log/slurmd.log" >&2 2>/dev/null || true
		stop_daemons "$dir"
		die "the node did not become idle within 30 s (logs in $dir/log)"
	fi
	trap - ERR
	if [ -n "${CLUSTER_OWNER_PID:-}" ]; then
		(
			while kill -0 "$CLUSTER_OWNER_PID" 2>/dev/null && [ -f "$dir/pids" ]; do sleep 1; done
			if [ -f "$dir/pids" ]; then
				echo "slurm cluster: owner $CLUSTER_OWNER_PID has gone; stopping the daemons" >&2
				stop_daemons "$dir"
			fi
		) </dev/null >>"$dir/log/watchdog.out" 2>&1 &
		echo "watchdog $!" >>"$dir/pids"
	fi
	echo "export SLURM_CONF=$dir/slurm.conf"
}

[ $# -ge 2 ] || usage
cmd="$1" dir="$2"
shift 2
case "$cmd" in
start) start_cluster "$dir" ;;
stop) stop_daemons "$dir" ;;
exec)
	[ "${1:-}" = "--" ] || usage
	shift
	[ $# -ge 1 ] || usage
	trap 'stop_daemons "$dir"' EXIT
	start_cluster "$dir" >/dev/null
	dir="$(cd "$dir" && pwd)"
	SLURM_CONF="$dir/slurm.conf" "$@"
	;;
*) usage ;;
esac
