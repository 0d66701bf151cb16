#!/bin/sh
# uninstall.sh — remove what install.sh installed for the current user.
#
#   sh ~/.local/share/lodestone/uninstall.sh
#
# Your settings and the autosaved map stay in ~/.config/lodestone and
# ~/.config/fyne/org.lodestone.atlas (or under $XDG_CONFIG_HOME); delete
# those folders to remove them as well.
set -eu

data_dir=${XDG_DATA_HOME:-$HOME/.local/share}
state=$data_dir/lodestone
list=$state/installed-files

if [ ! -f "$list" ]; then
	echo "uninstall.sh: Lodestone is not installed for this user ($list is missing)" >&2
	exit 1
fi
while IFS= read -r f; do
	rm -f -- "$f"
done <"$list"
rm -f -- "$list" "$state/uninstall.sh"
rmdir -- "$state" 2>/dev/null || true

if command -v update-desktop-database >/dev/null 2>&1; then
	update-desktop-database -q "$data_dir/applications" 2>/dev/null || true
fi
if command -v update-mime-database >/dev/null 2>&1 && [ -d "$data_dir/mime/packages" ]; then
	update-mime-database "$data_dir/mime" >/dev/null 2>&1 || true
fi

config=${XDG_CONFIG_HOME:-$HOME/.config}
echo "Lodestone is removed."
echo "Settings and the autosaved map are kept in $config/lodestone and $config/fyne/org.lodestone.atlas; delete them to remove them too."
