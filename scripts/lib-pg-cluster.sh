# A throwaway PostgreSQL cluster for the benchmark scripts (sourced, not run).
#
#   . scripts/lib-pg-cluster.sh
#   pg_cluster_start NAME      # sets pgbin, pgtmp, pg_owner_url (database "fleet" made)
#   ...                        # the cluster stops, and its folder goes, when the script ends
#
# Debian's packages (15 or later); run as the `postgres` user when you are root (initdb
# refuses root). The server runs on a Unix socket in a temporary folder with fsync,
# synchronous_commit and full_page_writes off: figures leave out the server's disk flushes, as
# on a fleet server with a battery-backed cache or better. PG_EXTRA_OPTS adds server settings.
# SHARDLOG_BENCH_PGLOG=1 logs every slow statement with its plan (auto_explain); the log is
# kept as target/NAME-server.log.

pg_bin() { ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1; }

pg_cluster_start() {
  local name="$1"
  if [ -z "$(pg_bin)" ]; then
    echo "$name: please install postgresql (15 or later)" >&2
    exit 1
  fi
  pgbin="$(pg_bin)"
  mkdir -p target
  pgtmp="$(mktemp -d "${TMPDIR:-/tmp}/shardlog-$name-pg.XXXXXX")"
  pg_as=()
  if [ "$(id -u)" = 0 ]; then
    chown postgres:postgres "$pgtmp"
    pg_as=(runuser -u postgres --)
  fi
  pg_cluster_name="$name"
  trap pg_cluster_stop EXIT
  "${pg_as[@]}" "$pgbin/initdb" -D "$pgtmp/data" -U postgres --auth=trust -E UTF8 --no-locale >"$pgtmp/initdb.log" 2>&1 \
    || { cat "$pgtmp/initdb.log" >&2; exit 1; }
  local opts="-k $pgtmp -c listen_addresses= -c fsync=off -c synchronous_commit=off -c full_page_writes=off"
  opts="$opts -c max_wal_size=8GB -c checkpoint_timeout=30min ${PG_EXTRA_OPTS:-}"
  if [ "${SHARDLOG_BENCH_PGLOG:-}" = 1 ]; then
    opts="$opts -c shared_preload_libraries=auto_explain -c auto_explain.log_min_duration=50"
    opts="$opts -c auto_explain.log_analyze=on -c auto_explain.log_nested_statements=on -c auto_explain.log_timing=on"
  fi
  "${pg_as[@]}" "$pgbin/pg_ctl" -D "$pgtmp/data" -l "$pgtmp/server.log" -w -s -o "$opts" start \
    || { cat "$pgtmp/server.log" >&2; exit 1; }
  "${pg_as[@]}" "$pgbin/createdb" -h "$pgtmp" -U postgres fleet
  pg_owner_url="postgresql:///fleet?host=$pgtmp&user=postgres"
}

pg_cluster_stop() {
  [ -n "${pgtmp:-}" ] || return 0
  "${pg_as[@]}" "$pgbin/pg_ctl" -D "$pgtmp/data" -m immediate stop >/dev/null 2>&1 || true
  [ -f "$pgtmp/server.log" ] && cp "$pgtmp/server.log" "target/$pg_cluster_name-server.log" 2>/dev/null
  rm -rf "$pgtmp"
}
