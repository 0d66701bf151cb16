//go:build !linux

package threadcpu

import "testing"

func setName(t *testing.T, name string) {}
