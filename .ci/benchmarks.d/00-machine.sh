#!/usr/bin/env bash
# The machine's load while the benchmarks ran: a figure is only as quiet as
# the machine it was measured on.
set -euo pipefail
echo "## Machine load"
echo
echo "Load average when this run started: $(cut -d' ' -f1-3 /proc/loadavg) (1, 5, 15 minutes)."
