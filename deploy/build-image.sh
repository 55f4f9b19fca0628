#!/usr/bin/env bash
# Builds the container image residue:<version of Cargo.toml> with podman, offline,
# FROM scratch: the release binary, the shared libraries `ldd` lists and the
# dynamic loader at their paths, /etc/passwd and /etc/group for user 65532.
#
# Usage: bash deploy/build-image.sh
# 1. Builds target/release/residue if it is missing or older than the sources
#    (cargo build --release --locked, one job at nice 10 unless CARGO_BUILD_JOBS is
#    set: a 2-core machine may be building something else; about 3-5 minutes).
# 2. Installs podman and buildah from Debian's packages if podman is missing; if
#    that is impossible, says so and exits 77 ("skipped").
# 3. Stages the files in target/image/context/rootfs, checks that the staged tree
#    alone runs the server (chroot as user 65532: /readyz answers 200) when chroot
#    is allowed, and builds the image from deploy/Containerfile.
# 4. Prints the image's size, and asserts with `podman image inspect` its user
#    (65532:65532), entrypoint (["/residue"]), exposed port (8080/tcp) and
#    RESIDUE_ADDR, and with `podman export` of a created (never started) container
#    that it holds exactly the staged files (no shell), each owned by root and
#    writable by no one else. Exits 1 if any differ.
# `podman run` is not used: in this sandbox the runtime refuses the cgroup and
# rlimit setup, so the tests run the same binary as processes instead.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=target/release/residue
VERSION=$(sed -n 's/^version = "\(.*\)"/\1/p' Cargo.toml | head -n 1)
IMAGE=residue:$VERSION
CONTEXT=target/image/context
ROOT=$CONTEXT/rootfs
started=$(date +%s)
fail() { echo "FAIL: $*" >&2; exit 1; }

# ---- 1. the release binary
newer=
if [ -x "$BIN" ]; then
  newer=$(find src templates static demo-scenarios Cargo.toml Cargo.lock -newer "$BIN" -print -quit 2>/dev/null || true)
fi
if [ ! -x "$BIN" ] || [ -n "$newer" ]; then
  echo "building $BIN (${newer:+$newer is newer; }one job at nice 10 unless CARGO_BUILD_JOBS is set)"
  t=$(date +%s)
  CARGO_BUILD_JOBS=${CARGO_BUILD_JOBS:-1} nice -n 10 cargo build --release --locked
  echo "release build: $(( $(date +%s) - t )) s"
else
  echo "$BIN is up to date with the sources"
fi

# ---- 2. podman
if ! command -v podman >/dev/null; then
  echo "installing podman and buildah from Debian's packages"
  apt-get install -y podman buildah >/dev/null 2>&1 \
    || { apt-get update >/dev/null 2>&1 && apt-get install -y podman buildah >/dev/null 2>&1; } \
    || { echo "SKIPPED: podman is missing and apt-get could not install it (apt-get install -y podman buildah)"; exit 77; }
fi
podman --version

# ---- 3. the staged tree: the binary, what ldd lists, the loader, passwd/group
rm -rf "$CONTEXT"
mkdir -p "$ROOT/etc"
install -m 0755 "$BIN" "$ROOT/residue"
# ldd prints "name => /path (address)" for each library and "/path (address)"
# for the loader; linux-vdso is the kernel's and has no file.
libs=$(ldd "$BIN" | awk '$2 == "=>" && $3 ~ /^\// {print $3} $1 ~ /^\// {print $1}' | sort -u)
[ -n "$libs" ] || fail "ldd listed no library for $BIN"
for lib in $libs; do
  # A real file at the path the binary asks for (cp -L follows /lib64's symlink).
  mkdir -p "$ROOT$(dirname "$lib")"
  cp -L "$lib" "$ROOT$lib"
  chmod 0755 "$ROOT$lib"
done
printf 'residue:x:65532:65532:residue:/nonexistent:/sbin/nologin\n' >"$ROOT/etc/passwd"
printf 'residue:x:65532:\n' >"$ROOT/etc/group"
chmod 0644 "$ROOT/etc/passwd" "$ROOT/etc/group"
cp deploy/Containerfile "$CONTEXT/Containerfile"
echo "staged $(find "$ROOT" -type f | wc -l) files, $(du -sk "$ROOT" | cut -f1) KB:"
(cd "$ROOT" && find . -type f | sed 's/^\./  /' | sort)
if find "$ROOT" -name sh -o -name bash -o -name busybox | grep -q .; then fail "a shell was staged"; fi

# The staged tree on its own, as the image's user, without the host's libraries:
# proves the loader finds every library at the copied paths.
if chroot --userspec=65532:65532 "$ROOT" /residue --version >/dev/null 2>&1; then
  port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])')
  chroot --userspec=65532:65532 "$ROOT" /residue --addr "127.0.0.1:$port" >"$CONTEXT/chroot.log" 2>&1 &
  pid=$!
  ok=
  for _ in $(seq 50); do
    if [ "$(curl -s -o /dev/null -w '%{http_code}' "http://127.0.0.1:$port/readyz")" = 200 ]; then ok=1; break; fi
    sleep 0.1
  done
  page=$(curl -s -o /dev/null -w '%{http_code}' "http://127.0.0.1:$port/") || true
  kill -TERM "$pid" 2>/dev/null || true
  wait "$pid" || true
  if [ -z "$ok" ] || [ "$page" != 200 ]; then
    cat "$CONTEXT/chroot.log"
    fail "the staged tree did not serve /readyz and / under chroot as 65532"
  fi
  echo "the staged tree alone serves /readyz and / (chroot, user 65532)"
else
  echo "chroot is not allowed here: the staged tree was not run on its own"
fi

# ---- 4. the image
# The default storage (overlay) works on this machine; where the kernel or the
# sandbox refuses overlay mounts, podman fails before building anything, and vfs
# (plain copies, slower, larger on disk, same image) is used instead.
STORAGE=()
if ! podman image ls >/dev/null 2>&1; then
  echo "podman's default storage is not usable here; using --storage-driver vfs"
  STORAGE=(--storage-driver vfs)
fi
t=$(date +%s)
previous=$(podman "${STORAGE[@]}" image inspect --format '{{.Id}}' "$IMAGE" 2>/dev/null || true)
# --layers=false: one image, no intermediate ones left behind.
podman "${STORAGE[@]}" build --pull=never --layers=false --build-arg "VERSION=$VERSION" \
  -f "$CONTEXT/Containerfile" -t "$IMAGE" "$CONTEXT"
echo "podman build: $(( $(date +%s) - t )) s"
current=$(podman "${STORAGE[@]}" image inspect --format '{{.Id}}' "$IMAGE")
if [ -n "$previous" ] && [ "$previous" != "$current" ]; then
  podman "${STORAGE[@]}" rmi "$previous" >/dev/null 2>&1 || true  # the build it replaces
fi

inspect() { podman "${STORAGE[@]}" image inspect --format "$1" "$IMAGE"; }
size=$(inspect '{{.Size}}')
echo "image $IMAGE: $size bytes ($(( size / 1024 )) KB); binary $(stat -c %s "$BIN") bytes"
user=$(inspect '{{.Config.User}}')
entrypoint=$(inspect '{{json .Config.Entrypoint}}')
ports=$(inspect '{{json .Config.ExposedPorts}}')
envs=$(inspect '{{json .Config.Env}}')
errors=0
expect() {
  if [ "$2" = "$3" ]; then echo "  ok   $1: $2"; else echo "  FAIL $1: $2 (expected $3)"; errors=$((errors + 1)); fi
}
expect user "$user" "65532:65532"
expect entrypoint "$entrypoint" '["/residue"]'
expect "exposed ports" "$ports" '{"8080/tcp":{}}'
expect "RESIDUE_ADDR" "$(grep -o 'RESIDUE_ADDR=[^"]*' <<<"$envs")" "RESIDUE_ADDR=0.0.0.0:8080"

# The image's files: a container is created (not started) and exported.
cid=$(podman "${STORAGE[@]}" create "$IMAGE")
listing=$(podman "${STORAGE[@]}" export "$cid" | tar -tvf -)
podman "${STORAGE[@]}" rm "$cid" >/dev/null
files=$(awk '$1 !~ /^d/ {print $6}' <<<"$listing" | sed 's|^\./||' | sort)
# Every file belongs to root and only root may write it: user 65532 cannot
# change the binary or its libraries even where the file system is writable.
loose=$(awk '$1 !~ /^d/ && ($2 != "0/0" || substr($1, 6, 1) == "w" || substr($1, 9, 1) == "w") {print $6}' <<<"$listing")
expect "files not root's or writable by others" "${loose:-none}" none
staged=$(cd "$ROOT" && find . -type f | sed 's|^\./||' | sort)
# podman create adds its own empty mount points and files (/etc/hosts,
# /etc/resolv.conf, /run/.containerenv, /dev and /proc entries); only those may differ.
extra=$(comm -23 <(echo "$files") <(echo "$staged") | grep -v -E '^(etc/hosts|etc/hostname|etc/resolv\.conf|run/\.containerenv|dev/.*|proc/.*|sys/.*)$' || true)
missing=$(comm -13 <(echo "$files") <(echo "$staged") || true)
expect "files beyond the staged ones" "${extra:-none}" none
expect "staged files missing" "${missing:-none}" none

echo "build-image: $(( $(date +%s) - started )) s in all"
if [ "$errors" -ne 0 ]; then echo "$errors assertion(s) failed"; exit 1; fi
echo "image $IMAGE built and checked"
