//go:build !linux

package threadcpu

import "time"

func used(int) (time.Duration, bool)         { return 0, false }
func self() (int, bool)                      { return 0, false }
func section(f func()) (time.Duration, bool) { f(); return 0, false }
func foreign() []Thread                      { return nil }
func process() (time.Duration, bool)         { return 0, false }
