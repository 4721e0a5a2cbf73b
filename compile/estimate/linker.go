package estimate

import (
	"context"
	"log/slog"
	"slices"

	"ingot/compile/counts"
	"ingot/compile/tables"
)

// Linker links the orders of counts while they are being spooled
// (counts.SpoolOrders, whose done is Spooled): order k as soon as its file
// is complete, on a goroutine of its own, while the orders above it are
// still read and merged. It is the pass EstimateStreamed makes first (link),
// with the same code, moved beside the spool: EstimateStreamed, given the
// Linker in StreamOptions, takes its links when they are the ones it would
// make itself (the same top order, every order's links within the budget,
// checked order by order as link's budget check does), and otherwise drops
// them and links or sorts as it would without it. The model is the same
// either way; an error a link found is EstimateStreamed's error only where
// its own link would have found it.
//
// Memory: one order's links (linkBytesAt), within StreamOptions.Memory, as
// the spool reads the orders above it.
type Linker struct {
	opt    Options
	so     StreamOptions
	ctx    context.Context
	cancel context.CancelFunc
	parts  chan *counts.Spooled
	done   chan struct{}
	closed bool
	// Valid once done is closed:
	s   *streamer // the links' streamer (nil: nothing was linked)
	k   int       // orders 2..k are linked
	err error     // the error a link gave
}

// StartLinker starts linking the orders of the model opt asks for, within
// so.Memory, writing its columns to so.Dir. Close it (EstimateStreamed
// does, when given it).
func StartLinker(ctx context.Context, opt Options, so StreamOptions) *Linker {
	l := &Linker{opt: opt, so: so, k: 1, parts: make(chan *counts.Spooled, tables.MaxOrder), done: make(chan struct{})}
	l.ctx, l.cancel = context.WithCancel(ctx)
	go l.run()
	return l
}

// Spooled tells the linker that order part.Order() is complete (the done of
// counts.SpoolOrders). It does not block.
func (l *Linker) Spooled(part *counts.Spooled) { l.parts <- part }

func (l *Linker) run() {
	defer close(l.done)
	opt := l.opt
	off := opt.Validate() != nil || opt.Survivors != nil || (opt.UnigramsBackedOff && opt.Method == KneserNey) ||
		(opt.Order < 3 && opt.Method != KneserNey)
	var ln *links
	for part := range l.parts {
		k := part.Order()
		if off || l.err != nil || k != l.k+1 || k > opt.Order {
			off = true
			continue
		}
		if l.s == nil {
			start, _ := slices.BinarySearch(part.Vocab, tables.SentenceStart)
			l.s = &streamer{ctx: l.ctx, sp: part, opt: opt, so: l.so, log: slog.New(slog.DiscardHandler), N: opt.Order,
				V: float64(len(part.Vocab) - 1), start: uint32(start), report: &Report{Method: opt.Method}}
			ln = l.s.newLinks()
		}
		l.s.sp = part
		if l.s.linkBytesAt(k) > l.so.Memory {
			off = true // EstimateStreamed will sort on disk
			continue
		}
		if l.err = ln.order(k); l.err == nil {
			l.k = k
		}
	}
}

// wait waits until the orders given are linked.
func (l *Linker) wait() {
	if !l.closed {
		l.closed = true
		close(l.parts)
	}
	<-l.done
}

// Close stops the linker (a link under way ends at its next check of the
// context), waits for it and removes the columns it wrote that
// EstimateStreamed did not take. It is safe to call more than once.
func (l *Linker) Close() {
	l.cancel()
	l.wait()
	l.drop()
}

// drop removes the linker's columns and forgets its links.
func (l *Linker) drop() {
	if l.s != nil {
		l.s.cleanup()
		l.s = nil
	}
}

// adopt gives s the links of l when they are the ones s.link would make:
// ok reports whether it did (then err is the error a link gave); else the
// links are dropped, their columns removed, and s links itself.
func (s *streamer) adopt(l *Linker) (ok bool, err error) {
	l.wait()
	defer l.drop()
	if l.s == nil || l.s.N != s.N || l.opt.Method != s.opt.Method || l.s.start != s.start {
		return false, nil
	}
	if l.err != nil {
		return true, l.err
	}
	if l.k != s.N {
		return false, nil
	}
	s.adj1, s.coc = l.s.adj1, l.s.coc
	s.files = append(s.files, l.s.files...)
	l.s.files = nil
	return true, nil
}
