#!/usr/bin/env bash
# A throwaway PostgreSQL server for the records tests: on 127.0.0.1 only, TLS on (a
# self-signed certificate), a password asked of every connection (scram-sha-256), the
# password in an owner-only .pgpass-style file. Nothing of it outlives the folder.
#
#   scripts/records_server.sh start DIR [PORT]   # prints the lines to export for the tests
#   scripts/records_server.sh stop DIR
#
# PostgreSQL refuses to run as root: run as root, the server runs as the `postgres` user
# (runuser), which then owns DIR/data. Needs initdb and pg_ctl on PATH (Debian:
# apt-get install postgresql; /usr/lib/postgresql/<major>/bin).
set -euo pipefail

command=${1:?"start DIR [PORT] or stop DIR"}
dir=$(mkdir -p "${2:?"a folder for the server"}" && cd "$2" && pwd)
port=${3:-54329}
user=vetfluid_test

if [ -z "$(command -v pg_ctl || true)" ]; then
  for bin in /usr/lib/postgresql/*/bin; do PATH="$bin:$PATH"; done
fi
as_server=()
if [ "$(id -u)" -eq 0 ]; then
  as_server=(runuser -u postgres --)
fi

case "$command" in
start)
  if [ ! -d "$dir/data" ]; then
    password=$(head -c 18 /dev/urandom | base64 | tr -d '/+=')
    umask 077
    printf '%s\n' "$password" >"$dir/password"
    printf '127.0.0.1:%s:*:%s:%s\n' "$port" "$user" "$password" >"$dir/pgpass"
    mkdir -p "$dir/data"
    if [ ${#as_server[@]} -gt 0 ]; then chown postgres "$dir" "$dir/data" "$dir/password"; fi
    "${as_server[@]}" initdb -D "$dir/data" -U "$user" --pwfile="$dir/password" \
      --auth-host=scram-sha-256 --auth-local=scram-sha-256 -E UTF8 --locale=C.UTF-8 >/dev/null
    rm -f "$dir/password"
    openssl req -x509 -newkey rsa:2048 -nodes -days 2 -subj "/CN=127.0.0.1" \
      -keyout "$dir/data/server.key" -out "$dir/data/server.crt" 2>/dev/null
    chmod 600 "$dir/data/server.key"
    if [ ${#as_server[@]} -gt 0 ]; then chown postgres "$dir/data/server.key" "$dir/data/server.crt"; fi
    cat >>"$dir/data/postgresql.conf" <<EOF
listen_addresses = '127.0.0.1'
port = $port
unix_socket_directories = '$dir/data'
ssl = on
max_connections = 200
fsync = on
EOF
  fi
  "${as_server[@]}" pg_ctl -D "$dir/data" -l "$dir/data/server.log" -w -t 60 start >/dev/null
  echo "export VETFLUID_TEST_POSTGRES_URL=postgresql://$user@127.0.0.1:$port/postgres"
  echo "export VETFLUID_TEST_POSTGRES_PASSFILE=$dir/pgpass"
  ;;
stop)
  "${as_server[@]}" pg_ctl -D "$dir/data" -m fast -w stop >/dev/null
  ;;
*)
  echo "start DIR [PORT] or stop DIR" >&2
  exit 2
  ;;
esac
