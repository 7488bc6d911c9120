# Real servers for the publishing tests (bundle/store), on 127.0.0.1 only.
# Sourced by .ci/run:
#
#   source .ci/servers.sh && kbc_servers_start
#
# kbc_servers_install installs them (idempotent; quick when already there):
#   - Debian's docker-registry package (the CNCF distribution registry),
#   - versitygw v1.8.0, an S3 server over a folder, built from the separate
#     tools module .ci/tools (so its dependencies stay out of our go.sum).
# kbc_servers_start starts one of each with a configuration written here (never
# the package's default configuration, which listens on every interface and
# asks for a password file), exports where they are, and sets an EXIT trap
# that stops them and removes their data:
#   KBC_TEST_OCI=127.0.0.1:PORT             registry (plain HTTP)
#   KBC_TEST_S3_ENDPOINT=http://127.0.0.1:PORT
#   KBC_TEST_S3_KEY, KBC_TEST_S3_SECRET      versitygw's root credentials (random per run)
#   KBC_TEST_S3_BUCKET                       a bucket name the tests create
#   KBC_TEST_VERSITYGW, KBC_TEST_REGISTRY    the programs, for tests that start
#                                            and kill a private instance

KBC_TOOLS_DIR="${KBC_TOOLS_DIR:-${XDG_CACHE_HOME:-$HOME/.cache}/kbc-tools}"
KBC_VERSITYGW_VERSION=v1.8.0

kbc_servers_install() {
  if ! command -v docker-registry >/dev/null; then
    if [[ -z "${KBC_APT_UPDATED:-}" ]]; then
      apt-get update -qq
      KBC_APT_UPDATED=1
    fi
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq docker-registry >/dev/null
  fi
  # The package enables a service with its default configuration; we never
  # use it (policy-rc.d usually stops it from starting in CI anyway).
  local bin="$KBC_TOOLS_DIR/versitygw-$KBC_VERSITYGW_VERSION"
  if [[ ! -x "$bin" ]]; then
    mkdir -p "$KBC_TOOLS_DIR"
    (cd "$(dirname "${BASH_SOURCE[0]}")/tools" &&
      go build -o "$bin.tmp" github.com/versity/versitygw/cmd/versitygw) &&
      mv "$bin.tmp" "$bin"
  fi
  export KBC_TEST_VERSITYGW="$bin"
  export KBC_TEST_REGISTRY="$(command -v docker-registry)"
  # Debian's chromium, for the live preview's headless browser test (bundle/preview).
  command -v chromium >/dev/null || { [[ -n "${KBC_APT_UPDATED:-}" ]] || apt-get update -qq; KBC_APT_UPDATED=1; DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null; }
}

# kbc_free_port prints a TCP port on 127.0.0.1 that nothing listens on.
kbc_free_port() {
  local p
  for _ in $(seq 1 50); do
    p=$((20000 + RANDOM % 30000))
    if ! (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null; then
      echo "$p"
      return 0
    fi
  done
  echo "kbc_free_port: no free port found" >&2
  return 1
}

# kbc_wait_port PORT PID NAME waits until PORT accepts connections.
kbc_wait_port() {
  for _ in $(seq 1 100); do
    if (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; then
      return 0
    fi
    if ! kill -0 "$2" 2>/dev/null; then
      echo "kbc servers: $3 exited; its log:" >&2
      cat "$KBC_SERVERS_DIR/$3.log" >&2
      return 1
    fi
    sleep 0.1
  done
  echo "kbc servers: $3 did not listen on 127.0.0.1:$1 within 10 s" >&2
  return 1
}

kbc_servers_start() {
  kbc_servers_install || return 1
  KBC_SERVERS_DIR="$(mktemp -d "${TMPDIR:-/tmp}/kbc-servers.XXXXXX")"
  trap kbc_servers_stop EXIT

  local port
  port="$(kbc_free_port)" || return 1
  mkdir -p "$KBC_SERVERS_DIR/registry"
  cat >"$KBC_SERVERS_DIR/registry.yml" <<YAML
version: 0.1
log:
  level: warn
storage:
  filesystem:
    rootdirectory: $KBC_SERVERS_DIR/registry
  delete:
    enabled: true
http:
  addr: 127.0.0.1:$port
YAML
  docker-registry serve "$KBC_SERVERS_DIR/registry.yml" >"$KBC_SERVERS_DIR/registry.log" 2>&1 &
  KBC_REGISTRY_PID=$!
  kbc_wait_port "$port" "$KBC_REGISTRY_PID" registry || return 1
  export KBC_TEST_OCI="127.0.0.1:$port"

  port="$(kbc_free_port)" || return 1
  mkdir -p "$KBC_SERVERS_DIR/s3"
  export KBC_TEST_S3_KEY="kbctest$RANDOM"
  export KBC_TEST_S3_SECRET="$(od -An -tx1 -N16 /dev/urandom | tr -d ' \n')"
  export KBC_TEST_S3_BUCKET=kbc-test
  ROOT_ACCESS_KEY_ID="$KBC_TEST_S3_KEY" ROOT_SECRET_ACCESS_KEY="$KBC_TEST_S3_SECRET" \
    "$KBC_TEST_VERSITYGW" --port "127.0.0.1:$port" posix "$KBC_SERVERS_DIR/s3" \
    >"$KBC_SERVERS_DIR/versitygw.log" 2>&1 &
  KBC_VERSITYGW_PID=$!
  kbc_wait_port "$port" "$KBC_VERSITYGW_PID" versitygw || return 1
  export KBC_TEST_S3_ENDPOINT="http://127.0.0.1:$port"
  echo "kbc servers: registry on $KBC_TEST_OCI, versitygw on $KBC_TEST_S3_ENDPOINT"
}

kbc_servers_stop() {
  local pid
  for pid in ${KBC_REGISTRY_PID:-} ${KBC_VERSITYGW_PID:-}; do
    # wait returns the server's exit status (143 after SIGTERM): ignore it,
    # or under set -e the trap would stop here and change the exit code.
    kill "$pid" 2>/dev/null || true
    wait "$pid" 2>/dev/null || true
  done
  KBC_REGISTRY_PID= KBC_VERSITYGW_PID=
  [[ -n "${KBC_SERVERS_DIR:-}" ]] && rm -rf "$KBC_SERVERS_DIR"
  return 0
}
