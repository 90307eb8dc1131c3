#!/usr/bin/env bash
# The compose topology on one machine without Docker: PostgreSQL, N server nodes on loopback ports, and
# optionally nginx as a round-robin front (same proxy settings as deploy/nginx.conf).
#
#   deploy/local-cluster.sh start [--dir DIR] [--ports 5081,5082] [--front 5080] [--balance session|round-robin]
#
# --balance session (default) sends all requests with the same Authorization header, so all of one annotator
# session, to the same node (consistent hash): its in-memory state stays warm there, and another node takes over
# from the database if that node goes. round-robin spreads every request (the cluster tests use it to make
# sessions cross nodes).
#   deploy/local-cluster.sh stop  [--dir DIR]
#
# Environment:
#   TEACHSERVE_DB          PostgreSQL connection string; unset: a throwaway cluster in DIR/pg (deploy/pg-cluster.sh)
#   TEACHSERVE_ADMIN_KEY   admin key shared by the nodes; unset: generated and written to DIR/admin-key
#   TEACHSERVE_SERVER_DLL  a built TeachServe.Server.dll; unset: `dotnet publish` into DIR/app (as the Dockerfile does)
#   TEACHSERVE_LOAD_DEMO   true to load the demo project (default false)
# Writes DIR/node-PORT.pid and .log, DIR/nginx/, and DIR/pg/ when it started PostgreSQL. `stop` ends all of them.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
repo=$(cd "$here/.." && pwd)

cmd=${1:-}; shift || true
dir="$repo/.local-cluster"; ports="5081,5082"; front=""; balance="session"
while [[ $# -gt 0 ]]; do
  case "$1" in
    --dir) dir=$2; shift 2 ;;
    --ports) ports=$2; shift 2 ;;
    --front) front=$2; shift 2 ;;
    --balance) balance=$2; shift 2 ;;
    *) echo "local-cluster: unknown option $1" >&2; exit 2 ;;
  esac
done

wait_ready() { # url seconds
  local deadline=$((SECONDS + $2))
  until curl -fs -o /dev/null "$1" 2>/dev/null; do
    (( SECONDS < deadline )) || return 1
    sleep 0.2
  done
}

stop_pid() { # pidfile
  [[ -f "$1" ]] || return 0
  local pid; pid=$(cat "$1")
  if kill -0 "$pid" 2>/dev/null; then
    kill -TERM "$pid" 2>/dev/null || true
    for _ in $(seq 1 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -KILL "$pid" 2>/dev/null || true
  fi
  rm -f "$1"
}

case "$cmd" in
  start)
    mkdir -p "$dir"; dir=$(cd "$dir" && pwd)
    chmod 755 "$dir"
    db=${TEACHSERVE_DB:-}
    if [[ -z "$db" ]]; then
      db=$("$here/pg-cluster.sh" start "$dir/pg")
    fi
    key=${TEACHSERVE_ADMIN_KEY:-}
    if [[ -z "$key" ]]; then
      [[ -f "$dir/admin-key" ]] || echo "tsa.$(head -c 24 /dev/urandom | base64 | tr -d '/+=')" > "$dir/admin-key"
      key=$(cat "$dir/admin-key")
    fi
    dll=${TEACHSERVE_SERVER_DLL:-}
    if [[ -z "$dll" ]]; then
      dotnet publish "$repo/src/TeachServe.Server" -c Release -r linux-x64 --self-contained false -o "$dir/app" --nologo -v quiet >&2
      dll="$dir/app/TeachServe.Server.dll"
    fi
    first=1
    for port in ${ports//,/ }; do
      mkdir -p "$dir/node-$port"
      # The same settings the containers get from the ConfigMap and Secret (deploy/k8s, compose.yaml).
      # Each node has a home of its own, as each container has: nothing but the database is shared (a shared
      # ~/.aspnet would hide a node that keeps its data-protection keys on local disk).
      HOME="$dir/node-$port" \
      TeachServe__Database__Provider=postgres \
      TeachServe__Database__ConnectionString="$db" \
      TeachServe__AdminKey="$key" \
      TeachServe__LoadDemo="${TEACHSERVE_LOAD_DEMO:-false}" \
      TeachServe__PrintStartupBanner=false \
      TeachServe__ForwardedHeaders__KnownProxies__0=127.0.0.1 \
      TeachServe__DataDirectory="$dir/node-$port" \
      ASPNETCORE_ENVIRONMENT=Production \
      setsid dotnet "$dll" --urls "http://127.0.0.1:$port" >"$dir/node-$port.log" 2>&1 < /dev/null &
      echo $! > "$dir/node-$port.pid"
      # The first node migrates alone; the others then start against a ready schema.
      if [[ $first == 1 ]]; then
        wait_ready "http://127.0.0.1:$port/readyz" 120 || { tail -n 30 "$dir/node-$port.log" >&2; echo "local-cluster: node $port not ready" >&2; exit 1; }
        first=0
      fi
    done
    for port in ${ports//,/ }; do
      wait_ready "http://127.0.0.1:$port/readyz" 120 || { tail -n 30 "$dir/node-$port.log" >&2; echo "local-cluster: node $port not ready" >&2; exit 1; }
    done
    if [[ -n "$front" ]]; then
      command -v nginx >/dev/null 2>&1 || [[ -x /usr/sbin/nginx ]] || { echo "local-cluster: nginx is not installed (apt-get install -y nginx)" >&2; exit 1; }
      mkdir -p "$dir/nginx/logs"
      upstreams=""
      case "$balance" in
        session) upstreams+="    hash \$http_authorization consistent;"$'\n' ;;
        round-robin) ;;
        *) echo "local-cluster: --balance is session or round-robin" >&2; exit 2 ;;
      esac
      for port in ${ports//,/ }; do upstreams+="    server 127.0.0.1:$port max_fails=0;"$'\n'; done
      user_line=""; [[ $(id -u) -eq 0 ]] && user_line="user root;"
      cat > "$dir/nginx/nginx.conf" <<CONF
$user_line
worker_processes 1;
pid $dir/nginx/nginx.pid;
error_log $dir/nginx/logs/error.log warn;
events { worker_connections 512; }
http {
  access_log off;
  client_body_temp_path $dir/nginx/body;
  proxy_temp_path $dir/nginx/proxy;
  fastcgi_temp_path $dir/nginx/fastcgi;
  uwsgi_temp_path $dir/nginx/uwsgi;
  scgi_temp_path $dir/nginx/scgi;
  client_max_body_size 40m;
  upstream teachserve {
$upstreams    # Reuse connections to the nodes (a new TCP connection per proxied request costs more than the request).
    keepalive 64;
  }
  server {
    listen 127.0.0.1:$front;
    location / {
      proxy_pass http://teachserve;
      proxy_http_version 1.1;
      proxy_set_header Connection "";
      proxy_set_header Host \$http_host;
      proxy_set_header X-Forwarded-For \$proxy_add_x_forwarded_for;
      proxy_next_upstream error timeout;
    }
  }
}
CONF
      "$(command -v nginx || echo /usr/sbin/nginx)" -p "$dir/nginx" -c "$dir/nginx/nginx.conf" </dev/null >"$dir/nginx/logs/start.log" 2>&1 \
        || { cat "$dir/nginx/logs/start.log" >&2; exit 1; }
      wait_ready "http://127.0.0.1:$front/readyz" 30 || { echo "local-cluster: nginx front not answering" >&2; exit 1; }
    fi
    echo "local-cluster: nodes on ${ports}${front:+, front on $front}; admin key in ${TEACHSERVE_ADMIN_KEY:+the environment}${TEACHSERVE_ADMIN_KEY:-$dir/admin-key}" >&2
    ;;
  stop)
    [[ -d "$dir" ]] || exit 0
    dir=$(cd "$dir" && pwd)
    if [[ -f "$dir/nginx/nginx.pid" ]]; then stop_pid "$dir/nginx/nginx.pid"; fi
    for f in "$dir"/node-*.pid; do [[ -e "$f" ]] && stop_pid "$f"; done
    if [[ -d "$dir/pg" ]]; then "$here/pg-cluster.sh" destroy "$dir/pg"; fi
    ;;
  *) echo "usage: local-cluster.sh start|stop [--dir DIR] [--ports P1,P2] [--front PORT]" >&2; exit 2 ;;
esac
