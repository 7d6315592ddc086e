#!/usr/bin/env bash
# Installs what gaptrace needs to build and test, when it is missing:
# OpenCV 4 development files (for gocv), and, with --test, ffmpeg (for the
# throughput benchmark), Chromium (to render the report in a test),
# poppler-utils (an independent reader of the figures' PDF files in a test),
# and Slurm with munge (the batch test starts a one-node cluster of its own).
set -euo pipefail
want_test=0
[ "${1:-}" = "--test" ] && want_test=1

sudo_() { if [ "$(id -u)" = 0 ]; then "$@"; elif command -v sudo >/dev/null; then sudo "$@"; else
  echo "deps: need root to run: $*" >&2; exit 1; fi; }

apt_pkgs=()
pkg-config --exists opencv4 2>/dev/null || apt_pkgs+=(libopencv-dev)
if [ "$want_test" = 1 ]; then
  command -v ffmpeg >/dev/null || apt_pkgs+=(ffmpeg)
  command -v chromium >/dev/null || apt_pkgs+=(chromium)
  # The daemons live in /usr/sbin, which a user's PATH may lack.
  have() { command -v "$1" >/dev/null || [ -x "/usr/sbin/$1" ]; }
  # slurm-wlm brings slurmctld, slurmd and the client commands (sbatch).
  have slurmctld && have slurmd && have sbatch || apt_pkgs+=(slurm-wlm)
  have munged || apt_pkgs+=(munge)
  command -v pdfinfo >/dev/null || apt_pkgs+=(poppler-utils)
fi
[ ${#apt_pkgs[@]} -eq 0 ] && exit 0

case "$(uname -s)" in
Linux)
  if command -v apt-get >/dev/null; then
    echo "deps: installing ${apt_pkgs[*]}" >&2
    sudo_ apt-get update -qq
    # Chromium and poppler are only for report tests, which skip without them.
    core=(); opt=()
    for p in "${apt_pkgs[@]}"; do case "$p" in chromium|poppler-utils) opt+=("$p") ;; *) core+=("$p") ;; esac; done
    [ ${#core[@]} -gt 0 ] && sudo_ env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${core[@]}" >/dev/null
    [ ${#opt[@]} -gt 0 ] && { sudo_ env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${opt[@]}" >/dev/null ||
      echo "deps: could not install ${opt[*]}; the report tests that need them will be skipped" >&2; }
  else
    echo "deps: please install OpenCV 4.6 development files (pkg-config name opencv4) and ffmpeg" >&2; exit 1
  fi ;;
Darwin)
  command -v brew >/dev/null || { echo "deps: install Homebrew, then: brew install opencv ffmpeg" >&2; exit 1; }
  brew install opencv ffmpeg ;;
*)
  echo "deps: please install OpenCV 4.6 development files (pkg-config name opencv4) and ffmpeg" >&2; exit 1 ;;
esac
pkg-config --exists opencv4 || { echo "deps: opencv4 still not found by pkg-config" >&2; exit 1; }
