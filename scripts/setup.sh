#!/usr/bin/env bash
# Installs, from Debian packages and only when missing, what memix needs to
# build and test: FFTW 3 and HDF5 headers and libraries, pkg-config, and
# SciPy/NumPy for the reference-value generators. With --slurm it adds
# slurm-wlm and munge for the scheduler integration test. Safe to re-run.
set -euo pipefail

pkgs=(libfftw3-dev libhdf5-dev pkg-config python3-scipy python3-numpy)
for arg in "$@"; do
	case "$arg" in
	--slurm) pkgs+=(slurm-wlm munge) ;;
	*) echo "setup: unknown option '$arg' (valid: --slurm)" >&2; exit 2 ;;
	esac
done

if ! command -v go >/dev/null 2>&1; then
	echo "setup: the Go toolchain is not on PATH; install Go (see go.mod for the version) and re-run" >&2
	exit 1
fi
if ! command -v gcc >/dev/null 2>&1; then
	echo "setup: gcc is not on PATH; cgo needs it to link FFTW and HDF5" >&2
	exit 1
fi

missing=()
for p in "${pkgs[@]}"; do
	if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
		missing+=("$p")
	fi
done
[ ${#missing[@]} -eq 0 ] && exit 0

if ! command -v apt-get >/dev/null 2>&1; then
	echo "setup: missing packages: ${missing[*]}; this machine has no apt-get, so install them with its package manager" >&2
	exit 1
fi
sudo=()
if [ "$(id -u)" -ne 0 ]; then
	if command -v sudo >/dev/null 2>&1; then
		sudo=(sudo)
	else
		echo "setup: missing packages: ${missing[*]}; run this script as root or install them: apt-get install ${missing[*]}" >&2
		exit 1
	fi
fi
apt=("${sudo[@]}" env DEBIAN_FRONTEND=noninteractive apt-get -o DPkg::Lock::Timeout=600 -y -q)
echo "setup: installing ${missing[*]}"
if ! "${apt[@]}" install --no-install-recommends "${missing[@]}" >/tmp/memix-setup.log 2>&1; then
	# The package lists may be stale or absent on a fresh machine.
	"${apt[@]}" update >>/tmp/memix-setup.log 2>&1 || true
	if ! "${apt[@]}" install --no-install-recommends "${missing[@]}" >>/tmp/memix-setup.log 2>&1; then
		tail -n 20 /tmp/memix-setup.log >&2
		echo "setup: apt-get could not install ${missing[*]} (log: /tmp/memix-setup.log)" >&2
		exit 1
	fi
fi
