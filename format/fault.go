package format

import (
	"fmt"
	"runtime/debug"
)

// FaultError reports a memory fault while reading a mapped model file: the
// file was truncated (or replaced in place by a shorter one) while it was
// open, and a query read bytes the file no longer holds.
type FaultError struct {
	// Path is the model file, when known.
	Path string
	// Addr is the faulting address.
	Addr uintptr
}

func (e *FaultError) Error() string {
	s := "model"
	if e.Path != "" {
		s = e.Path
	}
	return fmt.Sprintf("%s: the file changed while in use (memory fault at %#x): it was truncated or rewritten in place; open it again", s, e.Addr)
}

// Guard runs fn on the calling goroutine in a fault-safe mode: a memory
// fault in fn (a query reading a mapped file that shrank under it) is
// recovered and returned as a *FaultError instead of killing the process.
// A *FaultError that fn panics with (to carry a fault that a Guard caught in
// another goroutine) is returned too. Any other panic is passed on. It uses runtime/debug.SetPanicOnFault,
// which covers only the calling goroutine: goroutines that fn starts need
// a Guard of their own.
//
// A long-running decoder wraps its query loop, per word or (cheaper) per
// sentence, and on a *FaultError closes the model and opens it again. The
// README gives the measured cost per word.
func Guard(fn func() error) (err error) {
	old := debug.SetPanicOnFault(true)
	defer func() {
		debug.SetPanicOnFault(old)
		if r := recover(); r != nil {
			switch f := r.(type) {
			case *FaultError:
				err = f
			case interface{ Addr() uintptr }:
				err = &FaultError{Addr: f.Addr()}
			default:
				panic(r)
			}
		}
	}()
	return fn()
}

// Path returns the file the model was opened from ("" for FromBytes).
func (m *Model) Path() string { return m.path }
