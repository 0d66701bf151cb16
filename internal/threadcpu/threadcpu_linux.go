package threadcpu

import (
	"os"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"time"
	"unsafe"
)

// threadClock returns the clock id of thread tid's processor time: Linux
// encodes a thread's CPU clock as (~tid << 3) | CPUCLOCK_PERTHREAD_MASK (4)
// | CPUCLOCK_SCHED (2) (kernel/time/posix-cpu-timers.c, the clocks
// pthread_getcpuclockid returns).
func threadClock(tid int) uintptr { return uintptr(int64((^int32(tid))<<3 | 6)) }

func used(tid int) (time.Duration, bool) {
	var ts syscall.Timespec
	if _, _, e := syscall.Syscall(syscall.SYS_CLOCK_GETTIME, threadClock(tid), uintptr(unsafe.Pointer(&ts)), 0); e != 0 {
		return 0, false
	}
	return time.Duration(ts.Nano()), true
}

func self() (int, bool) { return syscall.Gettid(), true }

// clockProcessCPUTime is CLOCK_PROCESS_CPUTIME_ID.
const clockProcessCPUTime = 2

func process() (time.Duration, bool) {
	var ts syscall.Timespec
	if _, _, e := syscall.Syscall(syscall.SYS_CLOCK_GETTIME, clockProcessCPUTime, uintptr(unsafe.Pointer(&ts)), 0); e != 0 {
		return 0, false
	}
	return time.Duration(ts.Nano()), true
}

func section(f func()) (time.Duration, bool) {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	tid := syscall.Gettid()
	start, ok := used(tid)
	f()
	end, ok2 := used(tid)
	if !ok || !ok2 {
		return 0, false
	}
	return end - start, true
}

func foreign() []Thread {
	pid := os.Getpid()
	own := name("/proc/self/comm")
	entries, err := os.ReadDir("/proc/self/task")
	if err != nil {
		return nil
	}
	var out []Thread
	for _, e := range entries {
		tid, err := strconv.Atoi(e.Name())
		if err != nil || tid == pid {
			continue
		}
		if n := name("/proc/self/task/" + e.Name() + "/comm"); n != "" && n != own {
			out = append(out, Thread{ID: tid, Name: n})
		}
	}
	return out
}

func name(path string) string {
	b, err := os.ReadFile(path)
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(b))
}
