# ch_fixture.sh — sourced by the cluster tests: writes ClickHouse configs for
# one or two servers on free loopback ports in a temporary folder, starts
# them, waits for /ping, and stops them again (a trap, and a watchdog that
# kills them after a bound even if the test itself dies).
#
#   . ch_fixture.sh
#   ch_setup DIR N          # N = 1 or 2 servers; both shards of cluster "concord"
#   ch_start I              # starts server I (1-based), waits for /ping
#   ch_stop I               # stops server I (SIGTERM, then SIGKILL)
#   ch_stop_all             # what the trap calls
#   $CH_HTTP_<I>, $CH_TCP_<I>, $CH_URL_<I> (clickhouse://127.0.0.1:PORT/concord)
#   ch_query I SQL          # a query through the server's HTTP interface
#
# Tested with Debian 12's clickhouse-server 18.16.1. Exits 77 (CTest's skip
# code, see SKIP_RETURN_CODE) with a message when the server is not installed.

CH_SERVER=${CH_SERVER:-/usr/sbin/clickhouse-server}
CH_WATCHDOG_S=${CH_WATCHDOG_S:-1200}   # hang guard: servers die after this whatever happens
CH_PIDS=()

ch_require() {
  if [ ! -x "$CH_SERVER" ]; then
    echo "SKIP: $CH_SERVER is not installed (Debian package clickhouse-server; scripts/deps.sh --test)" >&2
    exit 77
  fi
  command -v curl > /dev/null || { echo "SKIP: curl is not installed" >&2; exit 77; }
}

# Free loopback TCP ports, n of them, held open together while chosen so
# they differ from each other.
ch_free_ports() {
  /usr/bin/python3 - "$1" << 'PY'
import socket, sys
socks = []
for _ in range(int(sys.argv[1])):
    s = socket.socket(); s.bind(("127.0.0.1", 0)); socks.append(s)
print(" ".join(str(s.getsockname()[1]) for s in socks))
PY
}

ch_setup() {
  ch_require
  CH_DIR=$1
  CH_N=$2
  mkdir -p "$CH_DIR"
  local ports i
  read -r -a ports <<< "$(ch_free_ports $((3 * CH_N)))"
  for i in $(seq 1 "$CH_N"); do
    eval "CH_HTTP_$i=${ports[$(( (i - 1) * 3 ))]}"
    eval "CH_TCP_$i=${ports[$(( (i - 1) * 3 + 1 ))]}"
    eval "CH_INTER_$i=${ports[$(( (i - 1) * 3 + 2 ))]}"
    eval "CH_URL_$i=clickhouse://127.0.0.1:\$CH_HTTP_$i/concord"
  done
  local shards=""
  for i in $(seq 1 "$CH_N"); do
    local tcp
    eval "tcp=\$CH_TCP_$i"
    shards="$shards<shard><replica><host>127.0.0.1</host><port>$tcp</port></replica></shard>"
  done
  for i in $(seq 1 "$CH_N"); do
    local d=$CH_DIR/s$i http tcp inter
    eval "http=\$CH_HTTP_$i; tcp=\$CH_TCP_$i; inter=\$CH_INTER_$i"
    mkdir -p "$d/data" "$d/tmp" "$d/user_files" "$d/log" "$d/format_schemas"
    cat > "$d/config.xml" << XML
<?xml version="1.0"?>
<yandex>
  <logger><level>warning</level><log>$d/log/server.log</log><errorlog>$d/log/server.err.log</errorlog><size>10M</size><count>1</count></logger>
  <http_port>$http</http_port>
  <tcp_port>$tcp</tcp_port>
  <interserver_http_port>$inter</interserver_http_port>
  <interserver_http_host>127.0.0.1</interserver_http_host>
  <listen_host>127.0.0.1</listen_host>
  <max_connections>64</max_connections>
  <keep_alive_timeout>3</keep_alive_timeout>
  <max_concurrent_queries>32</max_concurrent_queries>
  <uncompressed_cache_size>67108864</uncompressed_cache_size>
  <mark_cache_size>67108864</mark_cache_size>
  <path>$d/data/</path>
  <tmp_path>$d/tmp/</tmp_path>
  <user_files_path>$d/user_files/</user_files_path>
  <format_schema_path>$d/format_schemas/</format_schema_path>
  <users_config>$d/users.xml</users_config>
  <default_profile>default</default_profile>
  <default_database>default</default_database>
  <timezone>UTC</timezone>
  <mlock_executable>false</mlock_executable>
  <remote_servers><concord>$shards</concord></remote_servers>
</yandex>
XML
    cat > "$d/users.xml" << XML
<?xml version="1.0"?>
<yandex>
  <profiles><default><max_memory_usage>2000000000</max_memory_usage><load_balancing>in_order</load_balancing></default></profiles>
  <users><default><password></password><networks><ip>127.0.0.1</ip></networks><profile>default</profile><quota>default</quota></default></users>
  <quotas><default><interval><duration>3600</duration><queries>0</queries><errors>0</errors><result_rows>0</result_rows><read_rows>0</read_rows><execution_time>0</execution_time></interval></default></quotas>
</yandex>
XML
  done
  trap ch_stop_all EXIT
  # the watchdog: a separate process that outlives a killed test and stops
  # the servers after the bound
  ( sleep "$CH_WATCHDOG_S"
    for f in "$CH_DIR"/s*/pid; do [ -f "$f" ] && kill -9 "$(cat "$f")" 2> /dev/null; done
    echo "HANG: ClickHouse test servers in $CH_DIR still running after ${CH_WATCHDOG_S}s; killed" >&2
  ) > /dev/null 2>&1 &
  CH_WATCHDOG=$!
  disown "$CH_WATCHDOG" 2> /dev/null || true
}

ch_start() {
  local i=$1 d=$CH_DIR/s$1 http
  eval "http=\$CH_HTTP_$i"
  # 18.16 runs in the foreground with --config-file; its own output goes to the log
  "$CH_SERVER" --config-file="$d/config.xml" > "$d/log/stdout.log" 2>&1 &
  local pid=$!
  echo "$pid" > "$d/pid"
  local until=$(( $(date +%s) + 180 ))
  while ! curl -fsS "http://127.0.0.1:$http/ping" > /dev/null 2>&1; do
    if ! kill -0 "$pid" 2> /dev/null; then
      echo "FAIL: clickhouse-server $i exited early; its log:" >&2
      tail -n 40 "$d/log/stdout.log" "$d/log/server.err.log" >&2 2> /dev/null
      return 1
    fi
    if [ "$(date +%s)" -ge "$until" ]; then
      echo "HANG: clickhouse-server $i did not answer /ping on port $http in 180 s; its log:" >&2
      tail -n 40 "$d/log/server.err.log" >&2 2> /dev/null
      return 1
    fi
    sleep 0.1
  done
}

ch_stop() {
  local f=$CH_DIR/s$1/pid
  [ -f "$f" ] || return 0
  local pid
  pid=$(cat "$f")
  kill "$pid" 2> /dev/null || true
  local until=$(( $(date +%s) + 60 ))
  while kill -0 "$pid" 2> /dev/null; do
    if [ "$(date +%s)" -ge "$until" ]; then kill -9 "$pid" 2> /dev/null || true; fi
    sleep 0.1
  done
  wait "$pid" 2> /dev/null || true
  rm -f "$f"
}

ch_stop_all() {
  local i
  for i in $(seq 1 "${CH_N:-0}"); do ch_stop "$i"; done
  [ -n "${CH_WATCHDOG:-}" ] && kill "$CH_WATCHDOG" 2> /dev/null
  [ -n "${CH_KEEP:-}" ] || rm -rf "$CH_DIR"
}

ch_query() {
  local http
  eval "http=\$CH_HTTP_$1"
  curl -sS --fail-with-body "http://127.0.0.1:$http/" --data-binary "$2" 2>&1 || {
    echo "(query on server $1 failed: $2)" >&2; return 1; }
}
