#!/usr/bin/env bash
# A throwaway PostgreSQL cluster in a folder, on a loopback port, for tests and the local multi-node topology.
#   pg-cluster.sh start DIR [PORT]   create the cluster on first use (initdb), start it, print its connection string
#   pg-cluster.sh stop DIR           stop the server, keep the data (start DIR again resumes on the same port)
#   pg-cluster.sh destroy DIR        stop and delete the folder
# Uses Debian's packaged binaries (/usr/lib/postgresql/<version>/bin), installing the package if they are missing.
# As root, the server runs as the `postgres` user (PostgreSQL refuses to run as root).
set -euo pipefail

die() { echo "pg-cluster: $*" >&2; exit 1; }

find_bin() {
  if command -v pg_ctl >/dev/null 2>&1 && command -v initdb >/dev/null 2>&1; then
    dirname "$(command -v pg_ctl)"; return
  fi
  local d
  d=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1 || true)
  if [[ -z "$d" ]]; then
    [[ $(id -u) -eq 0 ]] || die "PostgreSQL is not installed; run: sudo apt-get install -y postgresql"
    echo "pg-cluster: installing Debian's postgresql package" >&2
    DEBIAN_FRONTEND=noninteractive apt-get update -qq >&2
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq postgresql >&2
    d=$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)
  fi
  echo "$d"
}

as_owner() {
  if [[ $(id -u) -eq 0 ]]; then runuser -u postgres -- "$@"; else "$@"; fi
}

free_port() {
  local p
  for _ in $(seq 1 50); do
    p=$((20000 + RANDOM % 20000))
    if ! (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null; then echo "$p"; return; fi
  done
  die "no free loopback port found"
}

cmd=${1:-}; dir=${2:-}
[[ -n "$cmd" && -n "$dir" ]] || die "usage: pg-cluster.sh start|stop|destroy DIR [PORT]"
bin=$(find_bin)

case "$cmd" in
  start)
    mkdir -p "$dir"
    dir=$(cd "$dir" && pwd)
    if [[ ! -f "$dir/data/PG_VERSION" ]]; then
      port=${3:-$(free_port)}
      password=$(head -c 18 /dev/urandom | base64 | tr -d '/+=')
      echo "$password" > "$dir/password"
      echo "$port" > "$dir/port"
      mkdir -p "$dir/data" "$dir/socket"
      chmod 700 "$dir/data"
      if [[ $(id -u) -eq 0 ]]; then
        chown -R postgres: "$dir"
        runuser -u postgres -- test -x "$dir" || die "user postgres cannot reach $dir; make its parent folders searchable (chmod 755)"
      fi
      as_owner "$bin/initdb" -D "$dir/data" -U postgres --pwfile="$dir/password" --auth=scram-sha-256 \
        --encoding=UTF8 --no-locale >"$dir/initdb.log" 2>&1 || { cat "$dir/initdb.log" >&2; die "initdb failed"; }
      # A throwaway cluster: durability is not needed, speed is.
      cat >> "$dir/data/postgresql.conf" <<CONF
listen_addresses = '127.0.0.1'
port = $port
unix_socket_directories = '$dir/socket'
max_connections = 300
fsync = off
synchronous_commit = off
full_page_writes = off
CONF
    fi
    port=$(cat "$dir/port")
    if ! as_owner "$bin/pg_ctl" -D "$dir/data" status >/dev/null 2>&1; then
      as_owner "$bin/pg_ctl" -D "$dir/data" -l "$dir/server.log" -w -t 60 start >/dev/null \
        || { tail -n 20 "$dir/server.log" >&2; die "the server did not start"; }
    fi
    conn="Host=127.0.0.1;Port=$port;Username=postgres;Password=$(cat "$dir/password");Database=postgres"
    echo "$conn" > "$dir/connection-string"
    echo "$conn"
    ;;
  stop)
    [[ -f "$dir/data/PG_VERSION" ]] || exit 0
    as_owner "$bin/pg_ctl" -D "$dir/data" status >/dev/null 2>&1 || exit 0
    as_owner "$bin/pg_ctl" -D "$dir/data" -m fast -w -t 60 stop >/dev/null
    ;;
  destroy)
    if [[ -f "$dir/data/PG_VERSION" ]] && as_owner "$bin/pg_ctl" -D "$dir/data" status >/dev/null 2>&1; then
      as_owner "$bin/pg_ctl" -D "$dir/data" -m immediate -w -t 60 stop >/dev/null || true
    fi
    rm -rf "$dir"
    ;;
  *) die "unknown command '$cmd'; use start, stop or destroy" ;;
esac
