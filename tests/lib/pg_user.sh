# pg_user.sh: sourced by tests/shell/postgres.sh and bench/bench_db.sh,
# which each start a throw-away PostgreSQL server.  Sets user (the server
# runs as ourselves, or as root as postgres or nobody, since the server
# refuses root) and as_server (run a command as that user); pg_folder DIR
# makes the server's own folder (data and socket) DIR/pg, in sock;
# pg_cleanup stops the server when started is set and removes $tmp.
if [ "$(id -u)" = 0 ]; then
  user=postgres
  id "$user" >/dev/null 2>&1 || user=nobody
  as_server() { runuser -u "$user" -- "$@"; }
else
  user=$(id -un)
  as_server() { "$@"; }
fi
pg_folder() {
  sock=$1/pg
  mkdir "$sock" && chmod 755 "$1" || return 1
  if [ "$(id -u)" = 0 ]; then chown "$user" "$sock"; fi
}
pg_cleanup() {
  [ -n "${started:-}" ] && as_server "$pgbin/pg_ctl" -D "$sock/data" -m immediate stop >/dev/null 2>&1
  rm -rf "$tmp"
}
