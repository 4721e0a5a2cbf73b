package estimate

import (
	"context"
	"fmt"
	"log/slog"
	"runtime/debug"
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
// make itself (the same top order and method, every order's links within
// the budget, checked order by order as link's budget check does), and
// estimates each order k as soon as orders up to k+1 are linked, while the
// linker still links the orders above; otherwise it drops them and links
// or sorts as it would without it. The model is the same either way; an
// error a link found is EstimateStreamed's error where its own link would
// have found it, also when an order estimated meanwhile failed too.
//
// Memory: one order's links (linkBytesAt), within StreamOptions.Memory, as
// the spool reads the orders above it or the orders below are estimated
// (whose probabilities linkBytesAt counts too).
type Linker struct {
	opt    Options
	so     StreamOptions
	ctx    context.Context
	cancel context.CancelFunc
	parts  chan spooled
	done   chan struct{}
	closed bool
	// linked[k] is closed once orders 2..k are linked.
	linked []chan struct{}
	taken  bool // by EstimateStreamed (takes)
	// behind is the order linked behind its spool (Started), once
	// complete and within the budget; 0: none.
	behind int
	// Valid once done is closed:
	s   *streamer // the links' streamer (nil: nothing was linked)
	k   int       // orders 2..k are linked
	err error     // the error a link gave
}

// StartLinker starts linking the orders of the model opt asks for, within
// so.Memory, writing its columns to so.Dir. Close it (EstimateStreamed
// does, when given it).
func StartLinker(ctx context.Context, opt Options, so StreamOptions) *Linker {
	l := &Linker{opt: opt, so: so, k: 1, parts: make(chan spooled, tables.MaxOrder+1), done: make(chan struct{}),
		linked: make([]chan struct{}, tables.MaxOrder+1)}
	for k := range l.linked {
		l.linked[k] = make(chan struct{})
	}
	l.ctx, l.cancel = context.WithCancel(ctx)
	go l.run()
	return l
}

// spooled is a message to the linker: an order complete, or the top
// order begun.
type spooled struct {
	part *counts.Spooled
	tail *counts.Tail
}

// Spooled tells the linker that order part.Order() is complete (the done of
// counts.SpoolOrders). It does not block.
func (l *Linker) Spooled(part *counts.Spooled) { l.parts <- spooled{part: part} }

// Started tells the linker that the spool of the top order has begun (the
// started of counts.SpoolTail): the linker links it behind the spool, as
// its entries are written, once the orders below are linked, so that its
// links are ready about when the spool ends rather than a link's time
// after; they are taken once Spooled announces the order complete, the
// budget checked as for the other orders. It does not block.
func (l *Linker) Started(t *counts.Tail) { l.parts <- spooled{tail: t} }

func (l *Linker) run() {
	defer close(l.done)
	opt := l.opt
	off := opt.Validate() != nil || opt.Survivors != nil || (opt.UnigramsBackedOff && opt.Method == KneserNey) ||
		(opt.Order < 3 && opt.Method != KneserNey)
	var ln *links
	tailK := 0 // the order linked behind its spool, not yet complete
	for m := range l.parts {
		if t := m.tail; t != nil {
			k := t.Order()
			if off || l.err != nil || k != l.k+1 || k != opt.Order || l.s == nil {
				continue // linked once complete, if at all
			}
			// The top order's links do not grow with its entries:
			// the budget is the one of an order of none (k < 2^31
			// entries checked once complete).
			part := *l.s.sp
			part.Entries = append(slices.Clone(part.Entries), 0)
			s := *l.s
			s.sp = &part
			if s.linkBytesAt(k) > l.so.Memory {
				continue
			}
			l.s.tail = t
			l.err = ln.order(k)
			l.s.tail = nil
			tailK = k
			continue
		}
		part := m.part
		k := part.Order()
		if k == tailK && !off && l.err == nil {
			l.s.sp = part
			if l.s.linkBytesAt(k) > l.so.Memory {
				off = true // as if it had not been linked
				ln = nil
				continue
			}
			l.k, l.behind = k, k
			close(l.linked[k])
			continue
		}
		if off || l.err != nil || k != l.k+1 || k > opt.Order {
			off = true
			continue
		}
		if l.s == nil {
			l.s = newStreamer(l.ctx, part, opt, l.so, slog.New(slog.DiscardHandler))
			ln = l.s.newLinks()
		}
		l.s.sp = part
		if l.s.linkBytesAt(k) > l.so.Memory {
			off = true // EstimateStreamed will sort on disk
			ln = nil   // nor will it need the links made so far
			continue
		}
		if l.err = ln.order(k); l.err == nil {
			l.k = k
			close(l.linked[k])
		}
	}
}

// entryReader reads the entries of one order, in order.
type entryReader interface {
	Next() ([]uint32, uint64, error)
	Close() error
}

// openOrder opens order k's entries: its spooled file, or the Tail being
// written (linked behind the spool).
func (s *streamer) openOrder(k int) (entryReader, error) {
	if s.tail != nil && s.tail.Order() == k {
		return s.tail.Open(s.ctx)
	}
	return s.sp.Open(k)
}

// spooled tells the linker that no order follows the ones given.
func (l *Linker) spooled() {
	if !l.closed {
		l.closed = true
		close(l.parts)
	}
}

// wait waits until the orders given are linked.
func (l *Linker) wait() {
	l.spooled()
	<-l.done
}

// linkedThrough waits until orders 2..k are linked (ok) or the linker has
// stopped short of k, with the error a link gave or none (it stopped at
// an order over the budget, or at a gap).
func (l *Linker) linkedThrough(k int) (ok bool, err error) {
	select {
	case <-l.linked[k]:
		return true, nil
	case <-l.done:
		select {
		case <-l.linked[k]:
			return true, nil
		default:
			return false, l.err
		}
	}
}

// Close stops the linker (a link under way ends at its next check of the
// context), waits for it and removes the columns it wrote that
// EstimateStreamed did not take. It is safe to call more than once.
func (l *Linker) Close() {
	l.cancel()
	l.wait()
	l.drop()
}

// drop removes the linker's columns and forgets its links; when it had
// linked an order, their memory goes back to the system before the
// estimate, which does without them, takes its own (an order's links are
// up to StreamOptions.Memory, the sort buffers that follow as much).
func (l *Linker) drop() {
	if l.s != nil {
		l.s.cleanup()
		l.s = nil
		if l.k > 1 && !l.taken {
			debug.FreeOSMemory()
		}
	}
}

// takes reports whether s, estimating on links in memory, takes the
// linker's links: they are the ones its own link would make when the
// linker links the same orders with the same method (every order then
// fits the budget, as s's does; s.N >= 2). s then waits for each order's
// links as it needs them (await), while the linker still links the
// orders above.
func (s *streamer) takes(l *Linker) bool {
	if l.opt.Order != s.N || l.opt.Method != s.opt.Method || s.N < 2 {
		return false
	}
	l.spooled()
	l.taken = true
	s.ahead = l
	return true
}

// await waits until the linker has linked orders 2..k (k >= 2) and takes
// what s needs of them: the unigrams' adjusted counts and the counts of
// counts link counted (the columns are in the same directory, by name).
func (s *streamer) await(k int) error {
	l := s.ahead
	if l == nil {
		return nil
	}
	ok, err := l.linkedThrough(min(k, s.N))
	if err != nil {
		return err
	}
	if !ok {
		return fmt.Errorf("the orders linked as they were spooled stop at order %d of %d", l.k, s.N)
	}
	s.adj1, s.coc = l.s.adj1, l.s.coc
	return nil
}

// linkerFirst returns the error a link of the linker s takes gave, if
// any, else err: the links come first, as when s links itself, so their
// error is the one reported.
func (s *streamer) linkerFirst(err error) error {
	if l := s.ahead; l != nil {
		l.wait()
		if l.err != nil {
			return l.err
		}
	}
	return err
}
