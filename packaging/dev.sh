#!/bin/sh
# dev.sh — set up a fresh Debian 12 / Ubuntu machine for Lodestone, then run
# the program or its tests.
#
#   sh packaging/dev.sh run    install what is missing, build, open the example atlas
#   sh packaging/dev.sh test   install what is missing, run every test
#
# It installs Debian packages with apt-get (through sudo when not root) and,
# when no Go 1.21 or newer is on PATH, the Go toolchain into ~/.local/go.
set -eu

cd "$(dirname "$0")/.."

SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO=sudo; fi

# Build needs: a C compiler and the GLFW/GTK headers Fyne and the native
# file dialog link against.
BUILD_PKGS="ca-certificates curl gcc libc6-dev make pkg-config libgl1-mesa-dev xorg-dev libgtk-3-dev"
# Tests also need: Xvfb for the real-window test, the reference libraries the
# numerical checks compare against, an SVG renderer, and the Linux packaging
# tools (the full `build.sh --check` also needs gcc-mingw-w64-x86-64).
TEST_PKGS="xvfb x11-utils appstream imagemagick python3 python3-scipy python3-sklearn python3-networkx librsvg2-bin desktop-file-utils dpkg-dev fakeroot file xz-utils zip"

GO_VERSION=1.26.8

missing_pkgs() {
	for p in "$@"; do
		dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || printf '%s ' "$p"
	done
}

install_pkgs() {
	m=$(missing_pkgs "$@")
	[ -z "$m" ] && return 0
	echo "dev.sh: installing $m"
	$SUDO apt-get update
	DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y --no-install-recommends $m
}

ensure_go() {
	if command -v go >/dev/null 2>&1; then
		minor=$(go env GOVERSION | sed -n 's/^go1\.\([0-9]*\).*/\1/p')
		# Go 1.21+ fetches the toolchain go.mod asks for by itself.
		if [ -n "$minor" ] && [ "$minor" -ge 21 ]; then return 0; fi
	fi
	if [ -x "$HOME/.local/go/bin/go" ]; then
		PATH="$HOME/.local/go/bin:$PATH"; export PATH; return 0
	fi
	echo "dev.sh: installing Go $GO_VERSION into $HOME/.local/go"
	mkdir -p "$HOME/.local"
	curl -fsSL "https://go.dev/dl/go$GO_VERSION.linux-amd64.tar.gz" | tar -C "$HOME/.local" -xz
	PATH="$HOME/.local/go/bin:$PATH"; export PATH
}

# stage NAME: a line saying that a stage of the tests starts, and when.
stage() { echo "dev.sh: $(date -u +%H:%M:%S) $1"; }

run_fuzz_briefly() {
	# Each fuzz target for a fixed number of inputs from its committed seed
	# corpus. A count rather than a duration: with a duration, Go 1.26's
	# fuzzing coordinator can report "context deadline exceeded" as a
	# failure when the time runs out while a worker is busy (Go issue
	# 75804, fixed in Go 1.27); a count has no deadline to race.
	for pkg in $(go list ./...); do
		for f in $(go test -list '^Fuzz' "$pkg" | grep '^Fuzz' || true); do
			echo "fuzz $pkg $f"
			go test -run='^$' -fuzz="^$f\$" -fuzztime="${FUZZ_INPUTS:-20000}x" "$pkg"
		done
	done
}

case "${1:-}" in
run)
	install_pkgs $BUILD_PKGS
	ensure_go
	go build -o lodestone .
	exec ./lodestone --example
	;;
test)
	install_pkgs $BUILD_PKGS $TEST_PKGS
	ensure_go
	export LANG=C.UTF-8 LANGUAGE=en GSETTINGS_BACKEND=memory
	# -trimpath everywhere, as the packages are built: the tests, the
	# real-window test's program and the package build share compiled
	# packages (GLFW's C code is compiled once).
	export GOFLAGS="${GOFLAGS:+$GOFLAGS }-trimpath"
	stage "go vet"
	go vet ./...
	stage "go test"
	go test -count=1 -timeout 30m ./...
	stage "go test -race"
	# The engine ↔ window bridge and everything else that crosses goroutines.
	go test -count=1 -race -short ./compute/parallel/... ./app/live/... ./app/session/... ./canvas ./canvas/raster/... ./canvas/spatial/... ./internal/threadcpu
	# The atlas view's background jobs, closed while each runs; the frames
	# handed from the optimiser to the map.
	go test -count=1 -race -short -run 'TestClosingTheViewEndsEveryJob|TestClosingTheWindowStopsALoading|TestFidelityIsMarkedWhileTheMapMoves|TestRapidTurnsThroughTheFramePump|TestFramesArePaced|TestDialDragTurnsWhenTheNeedleRests' ./app/window
	stage "fuzzing"
	run_fuzz_briefly
	# The Linux packages, installed in a scratch root and run; the Windows
	# program's cross-build is checked by `sh packaging/build.sh --check`.
	stage "packages"
	if [ -f packaging/build.sh ]; then sh packaging/build.sh --check --linux; fi
	echo "dev.sh: all tests passed"
	;;
*)
	echo "usage: sh packaging/dev.sh run|test" >&2
	exit 2
	;;
esac
