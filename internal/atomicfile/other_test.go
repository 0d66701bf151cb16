//go:build !unix

package atomicfile

import (
	"errors"
	"net"
)

func mkfifo(string) error { return errors.New("no named pipes on this system") }

func listenUnix(string) (net.Listener, error) { return nil, errors.New("no Unix sockets here") }
