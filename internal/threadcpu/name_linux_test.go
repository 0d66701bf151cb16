package threadcpu

import (
	"syscall"
	"testing"
	"unsafe"
)

// setName names the calling thread (prctl PR_SET_NAME), as libraries name
// the threads they start.
func setName(t *testing.T, name string) {
	b := append([]byte(name), 0)
	if _, _, e := syscall.Syscall(syscall.SYS_PRCTL, 15, uintptr(unsafe.Pointer(&b[0])), 0); e != 0 {
		t.Fatal(e)
	}
}
