package threadcpu

import (
	"os"
	"runtime"
	"testing"
	"time"
)

// spin keeps the processor busy for about d of wall time and returns a
// value that depends on the work done.
func spin(d time.Duration) int {
	x := 0
	for start := time.Now(); time.Since(start) < d; {
		for i := 0; i < 10000; i++ {
			x += i ^ x
		}
	}
	return x
}

// TestSectionCountsItsWork checks that a busy section is charged processor
// time, at most its wall time (a loaded machine gives it less), and an idle
// one almost none.
func TestSectionCountsItsWork(t *testing.T) {
	if runtime.GOOS != "linux" {
		if _, ok := Section(func() {}); ok {
			t.Fatal("a section measured without per-thread clocks")
		}
		t.Skip("per-thread processor clocks are read on Linux only")
	}
	start := time.Now()
	busy, ok := Section(func() { spin(60 * time.Millisecond) })
	wall := time.Since(start)
	if !ok || busy <= 0 || busy > wall+time.Millisecond {
		t.Fatalf("a busy section of %v used %v (ok %v)", wall, busy, ok)
	}
	idle, ok := Section(func() { time.Sleep(60 * time.Millisecond) })
	if !ok || idle > 10*time.Millisecond {
		t.Fatalf("a sleeping section used %v (ok %v)", idle, ok)
	}
}

// TestForeignThreadsAreFound names a thread as a library would, and finds
// it among the foreign threads with the processor time it used.
func TestForeignThreadsAreFound(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("threads are listed on Linux only")
	}
	ready, done := make(chan int), make(chan struct{})
	defer close(done)
	var tid int
	for tid == 0 {
		go func() {
			runtime.LockOSThread() // the thread ends with the goroutine
			id, _ := Self()
			if id == os.Getpid() { // the main thread: it keeps the program's name
				runtime.UnlockOSThread()
				ready <- 0
				return
			}
			setName(t, "painter-test")
			spin(40 * time.Millisecond)
			ready <- id
			<-done
		}()
		tid = <-ready
	}
	found := false
	for _, th := range Foreign() {
		if th.ID == tid && th.Name == "painter-test" {
			found = true
		}
	}
	if !found {
		t.Fatalf("thread %d named painter-test not among %v", tid, Foreign())
	}
	if d, ok := Used(tid); !ok || d <= 0 {
		t.Fatalf("the named thread used %v (ok %v)", d, ok)
	}
	main, ok := Self()
	if !ok {
		t.Fatal("no thread id")
	}
	for _, th := range Foreign() {
		if th.ID == main {
			t.Fatalf("the test's own thread %d counted as foreign", main)
		}
	}
}

// TestProcessCountsEveryThread spins on two goroutines at once: the
// process is charged at least the processor time of both sections, which
// the per-thread clocks measure.
func TestProcessCountsEveryThread(t *testing.T) {
	before, ok := Process()
	if runtime.GOOS != "linux" {
		if ok {
			t.Fatal("the process's time measured without its clock")
		}
		t.Skip("the process's processor clock is read on Linux only")
	}
	if !ok {
		t.Fatal("no processor time for the process")
	}
	var sections [2]time.Duration
	done := make(chan int)
	for k := range sections {
		go func() {
			sections[k], _ = Section(func() { spin(40 * time.Millisecond) })
			done <- k
		}()
	}
	<-done
	<-done
	after, _ := Process()
	if after-before < sections[0]+sections[1] {
		t.Fatalf("the process used %v while its two sections used %v and %v", after-before, sections[0], sections[1])
	}
}
