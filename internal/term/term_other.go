//go:build !linux && !darwin && !freebsd && !netbsd && !openbsd && !dragonfly && !windows

package term

func isTerminal(uintptr) bool { return false }
