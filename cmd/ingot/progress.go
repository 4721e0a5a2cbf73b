package main

import (
	"fmt"
	"io"
	"os"
	"time"
)

// progress tells a person at a terminal what a long command is doing: one
// line per stage on stderr, with the time the previous stage took. It says
// nothing when stderr is not a terminal (a pipeline, a log file, a test),
// so that scripted output stays exactly what the documentation shows.
type progress struct {
	w     io.Writer // nil when silent
	stage string
	start time.Time
}

func newProgress(stderr io.Writer) *progress {
	p := &progress{}
	if f, ok := stderr.(*os.File); ok {
		if fi, err := f.Stat(); err == nil && fi.Mode()&os.ModeCharDevice != 0 {
			p.w = stderr
		}
	}
	return p
}

// step ends the current stage (printing its time) and starts the next.
func (p *progress) step(format string, args ...any) {
	p.done()
	p.stage = fmt.Sprintf(format, args...)
	p.start = time.Now()
	if p.w != nil {
		fmt.Fprintf(p.w, "%s ...", p.stage)
	}
}

// done ends the current stage.
func (p *progress) done() {
	if p.w != nil && p.stage != "" {
		fmt.Fprintf(p.w, " %.1fs\n", time.Since(p.start).Seconds())
	}
	p.stage = ""
}
