#!/bin/sh
# Speed of `shardlog stats --by cause,supplier --rates --weibull` over a database of
# 1,000,000 invented incidents (issue 5 goal: under 1 s). Builds the release binary, makes the
# demo database once (kept in target/bench-stats/; or put a copy of one there under the same
# name), opens it once untimed (an older database is migrated then: that time is printed
# separately), then times three runs: wall, CPU (user+system) and peak resident memory, with
# the load of the machine before and after.
# Usage: scripts/bench-stats.sh [incidents]
set -eu
n="${1:-1000000}"
cd "$(dirname "$0")/.."
cargo build --release --quiet
bin=target/release/shardlog
dir=target/bench-stats
db="$dir/demo-$n.db"
mkdir -p "$dir"
if [ ! -f "$db" ]; then
    echo "making $db ..."
    start=$(date +%s)
    "$bin" demo --out "$db" --incidents "$n" > /dev/null
    echo "  made in $(( $(date +%s) - start )) s"
fi
/usr/bin/time -f "first open (migrates an older schema): %e s wall, %U+%S s cpu, %M kB peak" \
    "$bin" --db "$db" stats --by cause > /dev/null
echo "load before: $(uptime)"
for i in 1 2 3; do
    /usr/bin/time -f "stats --by cause,supplier --rates --weibull: %e s wall, %U+%S s cpu, %M kB peak" \
        "$bin" --db "$db" stats --by cause,supplier --rates --weibull > "$dir/out.txt"
done
echo "load after:  $(uptime)"
head -5 "$dir/out.txt"
