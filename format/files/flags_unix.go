//go:build unix

package files

import "syscall"

// nonBlocking opens a named pipe without waiting for a writer.
const nonBlocking = syscall.O_NONBLOCK
