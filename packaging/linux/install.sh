#!/bin/sh
# install.sh — install Lodestone for the current user, without administrator
# rights: the program into ~/.local/bin, and its menu entry, icons and the
# session file type into ~/.local/share (or $XDG_DATA_HOME). Run it from the
# unpacked folder:
#
#   sh install.sh
#
# Installing again replaces the earlier copy. To remove Lodestone later:
#
#   sh ~/.local/share/lodestone/uninstall.sh
set -eu

here=$(CDPATH='' cd -- "$(dirname -- "$0")" && pwd)
bin_dir=$HOME/.local/bin
data_dir=${XDG_DATA_HOME:-$HOME/.local/share}
state=$data_dir/lodestone
id=org.lodestone.atlas

if [ ! -f "$here/lodestone" ] || [ ! -d "$here/share" ]; then
	echo "install.sh: run me from the unpacked Lodestone folder ($here has no lodestone program)" >&2
	exit 1
fi
case $bin_dir in
*[\"\`\$\\]*)
	echo "install.sh: cannot write a menu entry for $bin_dir (it holds a quote, \$ or \\)" >&2
	exit 1
	;;
esac

mkdir -p "$bin_dir" "$state"
list=$state/installed-files.new
: >"$list"

# The program: copied beside the old one, then moved over it, so that a
# running copy keeps working.
cp "$here/lodestone" "$bin_dir/.lodestone.new"
chmod 0755 "$bin_dir/.lodestone.new"
mv -f "$bin_dir/.lodestone.new" "$bin_dir/lodestone"
echo "$bin_dir/lodestone" >>"$list"

# Menu entry, icons, file type and description, at the same places under
# the data folder as under share/ here.
(cd "$here/share" && find . -type f) | while IFS= read -r f; do
	f=${f#./}
	mkdir -p "$data_dir/$(dirname "$f")"
	cp "$here/share/$f" "$data_dir/$f"
	chmod 0644 "$data_dir/$f"
	echo "$data_dir/$f" >>"$list"
done

# ~/.local/bin is often not on the desktop's PATH: name the program in full.
desktop=$data_dir/applications/$id.desktop
sed -e "s|^TryExec=lodestone\$|TryExec=$bin_dir/lodestone|" \
	-e "s|^Exec=lodestone |Exec=\"$bin_dir/lodestone\" |" "$here/share/applications/$id.desktop" >"$desktop"

cp "$here/uninstall.sh" "$state/uninstall.sh"
chmod 0755 "$state/uninstall.sh"
mv -f "$list" "$state/installed-files"

# Tell the desktop about the new entry and file type, where it can be told.
if command -v update-desktop-database >/dev/null 2>&1; then
	update-desktop-database -q "$data_dir/applications" || true
fi
if command -v update-mime-database >/dev/null 2>&1; then
	update-mime-database "$data_dir/mime" >/dev/null 2>&1 || true
fi

echo "Lodestone is installed: find it in your applications menu, or run $bin_dir/lodestone"
case ":$PATH:" in
*":$bin_dir:"*) ;;
*) echo "(To start it by name from a terminal, add $bin_dir to your PATH.)" ;;
esac
echo "To remove it: sh $state/uninstall.sh"
