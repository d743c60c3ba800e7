#!/usr/bin/env bash
# Figures for `shardlog verify` with every check (the goal: 1,000,000 incidents in under 15 s
# on the 2-core machine): for each count given (default 100k, 1M), a fresh demo database,
# then `verify` timed RUNS times (default 3): wall and CPU time, peak memory, with the load
# average before and after (the machine may be shared; give both).
#   scripts/bench-verify.sh [COUNT...]          RUNS=1 scripts/bench-verify.sh 1000000
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin shardlog
out=target/bench-verify
mkdir -p "$out"
export SHARDLOG_KEY_DIR="$out/keys"
for c in ${@:-100000 1000000}; do
  db="$out/demo-$c.db"
  rm -rf "$db" "$db-wal" "$db-shm" "$db.files"
  target/release/shardlog demo --out "$db" --incidents "$c" >/dev/null
  echo "demo of $c incidents: $(du -m "$db" | cut -f1) MB"
  for _ in $(seq "${RUNS:-3}"); do
    echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
    /usr/bin/time -f "verify, $c incidents: %e s wall, %U+%S s cpu, %M KB peak" \
      target/release/shardlog --db "$db" verify >/dev/null
    echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
  done
  rm -rf "$db" "$db-wal" "$db-shm" "$db.files"
done
