//go:build unix

package atomicfile

import (
	"net"
	"syscall"
)

func mkfifo(path string) error { return syscall.Mkfifo(path, 0o600) }

func listenUnix(path string) (net.Listener, error) { return net.Listen("unix", path) }
