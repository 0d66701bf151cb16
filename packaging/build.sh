#!/bin/sh
# build.sh — build Lodestone's packages into dist/:
#
#   lodestone_<debian version>_amd64.deb        Debian/Ubuntu package (double-click installs)
#   lodestone-<version>-linux-x86_64.tar.xz     program, menu entry, icons, per-user install.sh
#   lodestone-<version>-windows-x86_64.zip      lodestone.exe (icon, version, manifest), README.txt
#   SHA256SUMS
#
#   sh packaging/build.sh           build the packages
#   sh packaging/build.sh --check   build them, then check them (a few minutes more)
#   sh packaging/build.sh --check --linux
#                                   only the Linux packages, built and checked
#                                   (what `dev.sh test` runs: the Windows
#                                   program's cross-build takes several minutes)
#
# Run it on Linux x86-64 from any folder of a git checkout. It needs Go, a C
# compiler with the GLFW/GTK headers (see packaging/dev.sh), and the Debian
# packages dpkg-dev, xz-utils, zip, gcc-mingw-w64-x86-64 and file; --check
# also needs xvfb and desktop-file-utils. The version comes from
# `git describe --tags --always --dirty` (tags look like v1.2.0); set
# LODESTONE_VERSION to override it, and DEB_MAINTAINER to name the Debian
# package's maintainer. The macOS application is built on a Mac: see
# packaging/macos/README.md.
set -eu

cd "$(dirname "$0")/.."
ROOT=$(pwd)
DIST=$ROOT/dist
APP_ID=org.lodestone.atlas
ICON_SIZES="16 24 32 48 64 128 256 512"
SYSO=$ROOT/lodestone_windows_amd64.syso

CHECK=false
WINDOWS=true
for arg in "$@"; do
	case $arg in
	--check) CHECK=true ;;
	--linux) WINDOWS=false ;;
	-h | --help)
		sed -n '2,/^set -eu/p' "$0" | sed -e '$d' -e 's/^# \{0,1\}//'
		exit 0
		;;
	*)
		echo "usage: sh packaging/build.sh [--check] [--linux]" >&2
		exit 2
		;;
	esac
done

say() { echo "build.sh: $*"; }
die() {
	echo "build.sh: $*" >&2
	exit 1
}

# fill TEMPLATE: print TEMPLATE with each @NAME@ replaced by the exported
# variable NAME.
fill() {
	awk '{
		out = ""
		while (match($0, /@[A-Z_]+@/)) {
			key = substr($0, RSTART + 1, RLENGTH - 2)
			if (!(key in ENVIRON)) {
				print "build.sh: " FILENAME ": nothing to put in for @" key "@" > "/dev/stderr"
				exit 1
			}
			out = out substr($0, 1, RSTART - 1) ENVIRON[key]
			$0 = substr($0, RSTART + RLENGTH)
		}
		print out $0
	}' "$1"
}

WORK=$(mktemp -d "${TMPDIR:-/tmp}/lodestone-build.XXXXXX")
XVFB_PID=""
cleanup() {
	if [ -n "$XVFB_PID" ]; then kill "$XVFB_PID" 2>/dev/null || true; fi
	rm -f "$SYSO"
	rm -rf "$WORK"
}
trap cleanup EXIT
trap 'exit 130' INT TERM

# ---- what is needed -------------------------------------------------------

[ "$(uname -s)/$(uname -m)" = Linux/x86_64 ] ||
	die "the packages are built on Linux x86-64 (this is $(uname -s)/$(uname -m)); for macOS see packaging/macos/README.md"
need() { # need COMMAND DEBIAN-PACKAGE
	command -v "$1" >/dev/null 2>&1 || MISSING="$MISSING $2"
}
MISSING=""
need go "golang (or Go from go.dev)"
need gcc gcc
need git git
need dpkg-deb dpkg
need dpkg-shlibdeps dpkg-dev
need xz xz-utils
need zip zip
if $WINDOWS; then
	need x86_64-w64-mingw32-gcc gcc-mingw-w64-x86-64
	need x86_64-w64-mingw32-windres binutils-mingw-w64-x86-64
fi
need file file
if $CHECK; then
	need Xvfb xvfb
	need desktop-file-validate desktop-file-utils
	need dpkg dpkg
	need timeout coreutils
fi
[ -z "$MISSING" ] || die "missing tools; install the Debian packages:$MISSING (sh packaging/dev.sh test installs all but the Windows cross-compiler: sudo apt-get install gcc-mingw-w64-x86-64)"

# ---- version --------------------------------------------------------------

# VERSION is stamped into the program and names the files; DEB_VERSION must
# start with a digit and sort in release order; VERSION_COMMAS is the four
# numbers of the Windows version resource.
describe=$(git describe --tags --always --dirty --match 'v[0-9]*' 2>/dev/null || echo unknown)
hash=$(git rev-parse --short=7 HEAD 2>/dev/null || echo unknown)
dirty=""
case $describe in *-dirty) dirty=.dirty ;; esac
SOURCE_DATE_EPOCH=${SOURCE_DATE_EPOCH:-$(git log -1 --format=%ct 2>/dev/null || date +%s)}
export SOURCE_DATE_EPOCH
if [ -n "${LODESTONE_VERSION:-}" ]; then
	VERSION=$LODESTONE_VERSION
	DEB_VERSION=$(echo "$VERSION" | sed 's/^v//; s/-/~/g')-1
elif tag=$(git describe --tags --abbrev=0 --match 'v[0-9]*' 2>/dev/null); then
	# v1.2.0 → 1.2.0; 3 commits later → 1.2.0-3-gabc1234 (Debian 1.2.0+git3.abc1234).
	VERSION=${describe#v}
	n=$(git rev-list --count "$tag..HEAD")
	base=$(echo "${tag#v}" | sed 's/-/~/g')
	if [ "$n" -eq 0 ]; then
		DEB_VERSION=$base${dirty:++git$hash$dirty}-1
	else
		DEB_VERSION=$base+git$n.$hash$dirty-1
	fi
else
	# No release tag yet: 0.0.0+abc1234 (Debian 0.0.0~git<commit time>.abc1234).
	VERSION=0.0.0+$describe
	when=$(TZ=UTC git log -1 --format=%cd --date=format-local:%Y%m%d%H%M%S 2>/dev/null || echo 0)
	DEB_VERSION=0.0.0~git$when.$hash$dirty-1
fi
case $VERSION in *[!A-Za-z0-9.+~_-]*) die "version \"$VERSION\" holds characters a file name should not" ;; esac
echo "$DEB_VERSION" | grep -Eq '^[0-9][A-Za-z0-9.+~]*-[0-9]+$' || die "cannot make a Debian version of \"$VERSION\" (got \"$DEB_VERSION\")"
VERSION_COMMAS=$(echo "$VERSION" | sed -n 's/^\([0-9]*\)\.\([0-9]*\)\.\([0-9]*\).*/\1,\2,\3,0/p')
VERSION_COMMAS=${VERSION_COMMAS:-0,0,0,0}
RELEASE_DATE=$(date -u -d "@$SOURCE_DATE_EPOCH" +%Y-%m-%d)
MAINTAINER=${DEB_MAINTAINER:-The Lodestone developers <maintainers@lodestone.invalid>}
export VERSION DEB_VERSION VERSION_COMMAS RELEASE_DATE MAINTAINER
say "version $VERSION (Debian $DEB_VERSION)"

LDFLAGS="-s -w -X lodestone/app/session.ProgramVersion=$VERSION"
for s in $ICON_SIZES; do
	[ -f "assets/icon-$s.png" ] || die "assets/icon-$s.png is missing: run go generate ./assets"
done
mkdir -p "$DIST"
rm -f "$DIST"/lodestone_*_amd64.deb "$DIST"/lodestone-*-linux-x86_64.tar.xz "$DIST"/lodestone-*-windows-x86_64.zip "$DIST/SHA256SUMS"

# licences GOOS FILE: LICENSES.md, then the licence files of the Go
# standard library and of every module compiled in for GOOS: those at the
# module's root, in the folders of the packages compiled in, and in their
# subfolders that hold no Go code (C sources, fonts) other than testdata.
licences() {
	GOOS=$1 GOARCH=amd64 CGO_ENABLED=1 go list -deps \
		-f '{{with .Module}}{{if not .Main}}{{.Path}} {{.Version}} {{.Dir}} {{end}}{{end}}{{.Dir}}' . |
		while read -r path version moddir pkgdir; do
			[ -n "${pkgdir:-}" ] || continue # the standard library and the main module
			for d in "$moddir" "$pkgdir" "$pkgdir"/*/; do
				d=${d%/}
				case $d in */testdata) continue ;; esac
				if [ "$d" != "$moddir" ] && [ "$d" != "$pkgdir" ] && ls "$d"/*.go >/dev/null 2>&1; then continue; fi
				for f in "$d"/LICENSE* "$d"/LICENCE* "$d"/COPYING* "$d"/NOTICE*; do
					[ -f "$f" ] && echo "$path $version $moddir $f"
				done
			done
		done | sort -u >"$WORK/licence-files"
	{
		echo "Licences of the software compiled into Lodestone $VERSION ($1/amd64)"
		echo "=================================================================="
		echo
		cat assets/LICENSES.md
		echo
		echo "------------------------------------------------------------------"
		echo "Go standard library and runtime ($(go env GOVERSION)): LICENSE"
		echo "------------------------------------------------------------------"
		cat "$(go env GOROOT)/LICENSE"
		while read -r path version moddir f; do
			echo
			echo "------------------------------------------------------------------"
			echo "$path $version: ${f#"$moddir"/}"
			echo "------------------------------------------------------------------"
			cat "$f"
		done <"$WORK/licence-files"
	} >"$2"
	grep -q "^fyne.io/fyne/v2 .*: LICENSE\$" "$2" || die "the licence of fyne.io/fyne/v2 was not found in the module cache"
}

# ---- Linux ----------------------------------------------------------------

say "building the Linux program"
mkdir -p "$WORK/linux"
CGO_ENABLED=1 GOOS=linux GOARCH=amd64 go build -trimpath -ldflags "$LDFLAGS" -o "$WORK/linux/lodestone" .
licences linux "$WORK/linux/THIRD-PARTY-LICENSES.txt"

# share/ holds the desktop files at their places under /usr/share (and
# ~/.local/share): menu entry, icons, file type, description.
share=$WORK/linux/share
mkdir -p "$share/applications" "$share/mime/packages" "$share/metainfo" "$share/icons/hicolor/scalable/apps"
cp "packaging/linux/$APP_ID.desktop" "$share/applications/"
cp "packaging/linux/$APP_ID.mime.xml" "$share/mime/packages/$APP_ID.xml"
fill "packaging/linux/$APP_ID.metainfo.xml" >"$share/metainfo/$APP_ID.metainfo.xml"
cp assets/icon.svg "$share/icons/hicolor/scalable/apps/$APP_ID.svg"
for s in $ICON_SIZES; do
	mkdir -p "$share/icons/hicolor/${s}x$s/apps"
	cp "assets/icon-$s.png" "$share/icons/hicolor/${s}x$s/apps/$APP_ID.png"
done

# Debian package.
say "making the Debian package"
deb=$WORK/deb
mkdir -p "$deb/DEBIAN" "$deb/usr/bin" "$deb/usr/share/doc/lodestone"
cp "$WORK/linux/lodestone" "$deb/usr/bin/lodestone"
cp -R "$share/." "$deb/usr/share/"
cp "$WORK/linux/THIRD-PARTY-LICENSES.txt" "$deb/usr/share/doc/lodestone/copyright"
# The shared libraries the program links against, as package names with
# the least versions its symbols need (from the installed packages' symbol
# files).
mkdir -p "$WORK/shlibs/debian"
printf 'Source: lodestone\n\nPackage: lodestone\nArchitecture: amd64\n' >"$WORK/shlibs/debian/control"
DEPENDS=$(cd "$WORK/shlibs" && dpkg-shlibdeps -O -e "$deb/usr/bin/lodestone" 2>"$WORK/shlibdeps.log" | sed -n 's/^shlibs:Depends=//p') ||
	die "dpkg-shlibdeps failed: $(cat "$WORK/shlibdeps.log")"
[ -n "$DEPENDS" ] || die "dpkg-shlibdeps found no library dependencies: $(cat "$WORK/shlibdeps.log")"
# GLFW opens these X11 extension libraries at run time (dlopen in its
# x11_init.c), where dpkg-shlibdeps cannot see them.
DEPENDS="$DEPENDS, libx11-xcb1, libxcursor1, libxi6, libxinerama1, libxrandr2, libxrender1, libxxf86vm1"
find "$deb" -type d -exec chmod 0755 {} +
find "$deb" -type f -exec chmod 0644 {} +
chmod 0755 "$deb/usr/bin/lodestone"
INSTALLED_SIZE=$(du -s -k "$deb/usr" | cut -f1)
export DEPENDS INSTALLED_SIZE
fill packaging/linux/control.in >"$deb/DEBIAN/control"
DEB=$DIST/lodestone_${DEB_VERSION}_amd64.deb
dpkg-deb --build --root-owner-group -Zxz "$deb" "$DEB" >/dev/null

# Tarball with a per-user installer.
say "making the Linux tarball"
name=lodestone-$VERSION-linux-x86_64
tdir=$WORK/tar/$name
mkdir -p "$tdir"
cp "$WORK/linux/lodestone" "$tdir/"
cp -R "$share" "$tdir/share"
cp packaging/linux/install.sh packaging/linux/uninstall.sh "$tdir/"
fill packaging/linux/README.txt >"$tdir/README.txt"
cp assets/LICENSES.md "$WORK/linux/THIRD-PARTY-LICENSES.txt" "$tdir/"
find "$tdir" -type d -exec chmod 0755 {} +
find "$tdir" -type f -exec chmod 0644 {} +
chmod 0755 "$tdir/lodestone" "$tdir/install.sh" "$tdir/uninstall.sh"
TARBALL=$DIST/$name.tar.xz
(cd "$WORK/tar" && tar --sort=name --owner=0 --group=0 --numeric-owner --mtime="@$SOURCE_DATE_EPOCH" -cf - "$name") |
	xz -6 >"$TARBALL"

# ---- Windows --------------------------------------------------------------

if $WINDOWS; then
	say "building the Windows program (the first build compiles GLFW: several minutes)"
	win=$WORK/windows
	mkdir -p "$win"
	ICON=$ROOT/assets/icon.ico MANIFEST=$ROOT/packaging/windows/lodestone.exe.manifest
	export ICON MANIFEST
	fill packaging/windows/lodestone.rc.in >"$win/lodestone.rc"
	# The _windows_amd64 suffix makes go build link the resources only into
	# the Windows program; cleanup removes the file again.
	x86_64-w64-mingw32-windres -O coff -i "$win/lodestone.rc" -o "$SYSO"
	CC=x86_64-w64-mingw32-gcc CGO_ENABLED=1 GOOS=windows GOARCH=amd64 \
		go build -trimpath -ldflags "-H=windowsgui $LDFLAGS" -o "$win/lodestone.exe" .
	rm -f "$SYSO"
	licences windows "$win/THIRD-PARTY-LICENSES.txt"
	wname=lodestone-$VERSION-windows-x86_64
	wdir=$WORK/zip/$wname
	mkdir -p "$wdir"
	cp "$win/lodestone.exe" "$wdir/"
	# Text files with Windows line ends, for Notepad.
	fill packaging/windows/README.txt | sed -e 's/$/\r/' >"$wdir/README.txt"
	sed -e 's/$/\r/' assets/LICENSES.md >"$wdir/LICENSES.md"
	sed -e 's/$/\r/' "$win/THIRD-PARTY-LICENSES.txt" >"$wdir/THIRD-PARTY-LICENSES.txt"
	find "$WORK/zip" -exec touch -d "@$SOURCE_DATE_EPOCH" {} +
	ZIP=$DIST/$wname.zip
	(cd "$WORK/zip" && find "$wname" | LC_ALL=C sort | zip -q -X -D "$ZIP" -@)
fi

PACKAGES="*.deb *.tar.xz"
if $WINDOWS; then PACKAGES="$PACKAGES *.zip"; fi
(cd "$DIST" && sha256sum -- $PACKAGES >SHA256SUMS)
say "built:"
(cd "$DIST" && ls -l -- $PACKAGES | sed 's/^/  /')

$CHECK || exit 0

# ---- checks ---------------------------------------------------------------

fail() { die "check failed: $*"; }
ok() { say "ok: $*"; }
T=$WORK/check
mkdir -p "$T"

# The Debian package's fields and files.
dpkg-deb --info "$DEB" >"$T/info" || fail "dpkg-deb --info cannot read $DEB"
for field in "Package: lodestone" "Version: $DEB_VERSION" "Architecture: amd64" "Section: science"; do
	grep -q "^ $field\$" "$T/info" || fail "the .deb's control has no \"$field\""
done
deps=$(sed -n 's/^ Depends: //p' "$T/info")
for lib in libc6 libgl1 libx11-6 libgtk-3-0 libxcursor1 libxrandr2 libxinerama1 libxi6 libxxf86vm1; do
	echo "$deps" | tr ',' '\n' | grep -q "^ *$lib\( \|\$\)" || fail "the .deb does not depend on $lib (Depends: $deps)"
done
ok "dpkg-deb --info: lodestone $DEB_VERSION amd64, Depends: $deps"

dpkg-deb --contents "$DEB" >"$T/contents" || fail "dpkg-deb --contents cannot read $DEB"
expect="./usr/bin/lodestone ./usr/share/applications/$APP_ID.desktop ./usr/share/mime/packages/$APP_ID.xml
./usr/share/metainfo/$APP_ID.metainfo.xml ./usr/share/doc/lodestone/copyright
./usr/share/icons/hicolor/scalable/apps/$APP_ID.svg"
for s in $ICON_SIZES; do expect="$expect ./usr/share/icons/hicolor/${s}x$s/apps/$APP_ID.png"; done
for p in $expect; do
	grep -q " $p\$" "$T/contents" || fail "the .deb lacks $p"
done
grep -q '^-rwxr-xr-x root/root .* \./usr/bin/lodestone$' "$T/contents" || fail "/usr/bin/lodestone is not an executable owned by root"
if awk '{print $2}' "$T/contents" | grep -v '^root/root$' >/dev/null; then fail "the .deb holds files not owned by root/root"; fi
ok "dpkg-deb --contents: program, menu entry, $(echo $ICON_SIZES | wc -w) icon sizes and the scalable icon, file type, metainfo, copyright"

# Unpacked into a scratch root: the desktop files validate and the
# program is the one just built.
dpkg -x "$DEB" "$T/root" || fail "dpkg -x cannot unpack $DEB"
desktop-file-validate "$T/root/usr/share/applications/$APP_ID.desktop" || fail "desktop-file-validate rejects the menu entry"
ok "desktop-file-validate: $APP_ID.desktop"
if command -v appstreamcli >/dev/null 2>&1; then
	appstreamcli validate --no-net "$T/root/usr/share/metainfo/$APP_ID.metainfo.xml" >"$T/appstream" 2>&1 ||
		fail "appstreamcli rejects the metainfo file: $(cat "$T/appstream")"
	ok "appstreamcli validate: $APP_ID.metainfo.xml"
else
	say "skipped: appstreamcli is not installed (Debian package appstream), the metainfo file is not validated"
fi
if command -v update-mime-database >/dev/null 2>&1; then
	mkdir -p "$T/mime/packages"
	cp "$T/root/usr/share/mime/packages/$APP_ID.xml" "$T/mime/packages/"
	update-mime-database "$T/mime" >"$T/mime.log" 2>&1 || fail "update-mime-database rejects the file type: $(cat "$T/mime.log")"
	grep -q "lodestone" "$T/mime/globs2" || fail "the file type's *.lodestone pattern did not reach the MIME database"
	ok "update-mime-database: *.lodestone is application/x-lodestone-session"
else
	say "skipped: update-mime-database is not installed (Debian package shared-mime-info)"
fi
grep -aqF "$VERSION" "$T/root/usr/bin/lodestone" || fail "the installed program does not carry the version $VERSION"

# The installed program passes its self-test in a real window on an X
# server of its own.
display=""
n=90
while [ $n -lt 200 ]; do
	if [ ! -e "/tmp/.X11-unix/X$n" ] && [ ! -e "/tmp/.X$n-lock" ]; then
		Xvfb ":$n" -screen 0 1400x900x24 -nolisten tcp >"$T/xvfb.log" 2>&1 &
		XVFB_PID=$!
		i=0
		while [ $i -lt 50 ] && [ ! -e "/tmp/.X11-unix/X$n" ] && kill -0 "$XVFB_PID" 2>/dev/null; do
			sleep 0.2
			i=$((i + 1))
		done
		if [ -e "/tmp/.X11-unix/X$n" ] && kill -0 "$XVFB_PID" 2>/dev/null; then
			display=:$n
			break
		fi
		kill "$XVFB_PID" 2>/dev/null || true
		XVFB_PID=""
	fi
	n=$((n + 1))
done
[ -n "$display" ] || fail "could not start Xvfb on a free display: $(cat "$T/xvfb.log")"
say "running the installed program's self-test on display $display (1 to 5 minutes)"
mkdir -p "$T/home" "$T/config" "$T/cache" "$T/data"
if ! env DISPLAY="$display" LANG=C.UTF-8 LANGUAGE=en GSETTINGS_BACKEND=memory HOME="$T/home" XDG_CONFIG_HOME="$T/config" \
	XDG_CACHE_HOME="$T/cache" XDG_DATA_HOME="$T/data" \
	timeout 900 "$T/root/usr/bin/lodestone" --selftest-out "$T/shots" >"$T/selftest.log" 2>&1; then
	tail -n 30 "$T/selftest.log" >&2
	fail "the installed program's self-test failed (log above)"
fi
[ -s "$T/shots/first.png" ] && [ -s "$T/shots/turned.png" ] || fail "the self-test left no screenshots"
kill "$XVFB_PID" 2>/dev/null || true
XVFB_PID=""
ok "lodestone --selftest passed under Xvfb"

# The tarball's files, and its installer and uninstaller in a scratch home.
tar -tJf "$TARBALL" >"$T/tarlist" || fail "cannot list $TARBALL"
for p in lodestone install.sh uninstall.sh README.txt LICENSES.md THIRD-PARTY-LICENSES.txt \
	share/applications/$APP_ID.desktop share/mime/packages/$APP_ID.xml share/metainfo/$APP_ID.metainfo.xml \
	share/icons/hicolor/scalable/apps/$APP_ID.svg; do
	grep -qx "$name/$p" "$T/tarlist" || fail "the tarball lacks $name/$p"
done
for s in $ICON_SIZES; do
	grep -qx "$name/share/icons/hicolor/${s}x$s/apps/$APP_ID.png" "$T/tarlist" || fail "the tarball lacks the $s-pixel icon"
done
mkdir -p "$T/untar" "$T/user"
tar -xJf "$TARBALL" -C "$T/untar"
env -u XDG_DATA_HOME -u XDG_CONFIG_HOME HOME="$T/user" PATH="$PATH" sh "$T/untar/$name/install.sh" >"$T/install.log" 2>&1 ||
	fail "install.sh failed: $(cat "$T/install.log")"
for p in .local/bin/lodestone .local/share/applications/$APP_ID.desktop .local/share/icons/hicolor/48x48/apps/$APP_ID.png \
	.local/share/mime/packages/$APP_ID.xml .local/share/lodestone/uninstall.sh; do
	[ -f "$T/user/$p" ] || fail "install.sh did not install ~/$p"
done
[ -x "$T/user/.local/bin/lodestone" ] || fail "install.sh left ~/.local/bin/lodestone not executable"
grep -qx "Exec=\"$T/user/.local/bin/lodestone\" %f" "$T/user/.local/share/applications/$APP_ID.desktop" ||
	fail "the installed menu entry does not name the program in full"
desktop-file-validate "$T/user/.local/share/applications/$APP_ID.desktop" || fail "desktop-file-validate rejects the per-user menu entry"
env -u XDG_DATA_HOME -u XDG_CONFIG_HOME HOME="$T/user" PATH="$PATH" sh "$T/user/.local/share/lodestone/uninstall.sh" >"$T/uninstall.log" 2>&1 ||
	fail "uninstall.sh failed: $(cat "$T/uninstall.log")"
left=$(cd "$T/user" && find . -type f ! -path './.local/share/mime/*' ! -name mimeinfo.cache)
[ -z "$left" ] || fail "uninstall.sh left files behind: $left"
ok "tarball: $(wc -l <"$T/tarlist") entries; install.sh and uninstall.sh work in a scratch home"

if $WINDOWS; then
	# The Windows program: a 64-bit GUI executable with its resources, needing
	# only libraries every Windows has.
	filetype=$(file -b "$win/lodestone.exe")
	case $filetype in
	*"PE32+ executable"*"(GUI)"*"x86-64"*) ;;
	*) fail "lodestone.exe is \"$filetype\", want a PE32+ executable (GUI) x86-64" ;;
	esac
	# Its resources, read back by windres: the icon group, the version and the
	# manifest.
	x86_64-w64-mingw32-windres -i "$win/lodestone.exe" -O rc -o "$T/resources.rc" || fail "windres cannot read the resources of lodestone.exe"
	icons=$(od -An -tu2 -j4 -N2 assets/icon.ico | tr -d ' ') # the image count in the icon file's header
	grep -q "RT_GROUP_ICON" "$T/resources.rc" || fail "lodestone.exe has no icon"
	grep -q "Has $icons elements" "$T/resources.rc" || fail "lodestone.exe's icon does not hold the $icons sizes of assets/icon.ico"
	grep -qF "VALUE \"ProductVersion\", \"$VERSION\"" "$T/resources.rc" || fail "lodestone.exe carries no version resource for $VERSION"
	grep -q "RT_MANIFEST" "$T/resources.rc" || fail "lodestone.exe has no manifest"
	dlls=$(x86_64-w64-mingw32-objdump -p "$win/lodestone.exe" | sed -n 's/^[[:space:]]*DLL Name: //p' | tr 'A-Z' 'a-z' | sort -u)
	for d in $dlls; do
		case $d in
		advapi32.dll | comdlg32.dll | gdi32.dll | kernel32.dll | msvcrt.dll | ole32.dll | opengl32.dll | shell32.dll | user32.dll | \
			winmm.dll | ws2_32.dll | comctl32.dll | dwmapi.dll | imm32.dll | oleaut32.dll | shlwapi.dll | uxtheme.dll | version.dll | \
			api-ms-win-*.dll | ntdll.dll | bcryptprimitives.dll | powrprof.dll | setupapi.dll | hid.dll | crypt32.dll | secur32.dll) ;;
		*) fail "lodestone.exe needs $d, which Windows does not ship" ;;
		esac
	done
	zip -sf "$ZIP" >"$T/ziplist" || fail "cannot list $ZIP"
	for p in lodestone.exe README.txt LICENSES.md THIRD-PARTY-LICENSES.txt; do
		grep -q "^ *$wname/$p\$" "$T/ziplist" || fail "the zip lacks $wname/$p"
	done
	ok "lodestone.exe: $filetype; icon, version $VERSION and manifest; imports $(echo $dlls | tr ' ' ',')"
fi

say "all package checks passed"
