# A thin wrapper around the project's scripts; see DEVELOPERS.md.
.PHONY: packages check-packages icons

# Build the Linux .deb and .tar.xz and the Windows .zip into dist/.
packages:
	sh packaging/build.sh

# Build the packages, then check them (self-test of the installed program).
check-packages:
	sh packaging/build.sh --check

# Render assets/icon.svg into the committed PNG files and icon.ico.
icons:
	go generate ./assets
