#!/usr/bin/env bash
# Figures for `shardlog demo` (issue 3: 1,000,000 incidents "well under a minute"): wall and
# CPU time, peak memory and file size for each count given (default 10k, 100k, 1M), with the
# load at the start and the end (the machine these run on is shared; give both times).
#   scripts/bench-demo.sh [COUNT...]
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin shardlog
out=target/bench-demo
mkdir -p "$out"
for n in "${@:-10000 100000 1000000}"; do
  for c in $n; do
    rm -rf "$out/demo-$c.db" "$out/demo-$c.db.files"
    echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
    /usr/bin/time -f "demo --incidents $c: %e s wall, %U+%S s cpu, %M KB peak" \
      target/release/shardlog demo --out "$out/demo-$c.db" --incidents "$c" >/dev/null
    echo "file: $(du -m "$out/demo-$c.db" | cut -f1) MB; load after: $(cut -d' ' -f1-3 /proc/loadavg)"
    rm -rf "$out/demo-$c.db" "$out/demo-$c.db.files"
  done
done
