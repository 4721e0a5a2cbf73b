package counts

import (
	"runtime"
	"sync"
	"sync/atomic"

	"ingot/compile/tables"
)

// where is where a merged entry came from, for error messages: the
// lowest-numbered stream that held it and where it stood there.
type where struct {
	from int
	at   position
}

// linkTask is a message to a linkBehind: a run of consecutive entries of
// one order k >= 3 to link, or (end) the news that order k >= 2 is
// complete.
type linkTask struct {
	k     int
	lo    int      // the first entry's index within its order
	room  int      // how many entries the order has room for (a hint)
	n     int      // how many entries (while they are gathered)
	words []uint32 // the entries (k ids each); with end, the whole order
	// where each entry came from; nil when the loader finds it from the
	// entry's index (loader.whereOf)
	where []where
	end   bool
	// With end at order 2: the order's links, found as it was read.
	parent, suffix []int32
}

// linkFailure is the first entry, in the order of the merge, whose prefix
// or suffix is not stored.
type linkFailure struct {
	k, i          int
	prefixMissing bool
	where         where
}

// linkBehind links the orders k >= 3 of a load while the entries of the
// orders above them are still being read: an order is linked on
// GOMAXPROCS goroutines, a run of entries each (tables.OrderLinker), as
// soon as the order below it is complete and linked. The links are those
// of tables.Link, whatever GOMAXPROCS and however the runs fall; of the
// entries that lack a prefix or a suffix, the first in the merge's order
// is reported.
type linkBehind struct {
	tasks  chan *linkTask
	done   chan struct{}
	closed bool
	failed atomic.Bool
	fail   *linkFailure // valid once done is closed
	links  tables.Links
	spare  chan []where
}

// startLinkBehind starts linking the orders of a load over a vocabulary of
// vocab words. finish must be called.
func startLinkBehind(vocab int) *linkBehind {
	lb := &linkBehind{
		tasks: make(chan *linkTask, 1024),
		done:  make(chan struct{}),
		links: tables.Links{Parent: [][]int32{nil}, Suffix: [][]int32{nil}},
		spare: make(chan []where, 64),
	}
	go lb.run(vocab)
	return lb
}

// whereRoom returns an empty slice to collect a task's positions in.
func (lb *linkBehind) whereRoom() []where {
	select {
	case w := <-lb.spare:
		return w[:0]
	default:
		return make([]where, 0, aheadBatch)
	}
}

// finish waits until every task sent is linked and returns the first
// entry that lacks its prefix or its suffix, if any.
func (lb *linkBehind) finish() *linkFailure {
	if !lb.closed {
		close(lb.tasks)
		lb.closed = true
	}
	<-lb.done
	return lb.fail
}

func (lb *linkBehind) run(vocab int) {
	defer close(lb.done)
	var (
		wg sync.WaitGroup
		mu sync.Mutex
		// The links of the order being linked: each task's goroutine
		// fills those of its entries, in place.
		parents, suffixes []int32
		lower             []uint32 // the entries of the complete order below
		below             = vocab  // how many
		linker            *tables.OrderLinker
		sem               = make(chan struct{}, runtime.GOMAXPROCS(0))
	)
	failAt := func(f linkFailure) {
		mu.Lock()
		if lb.fail == nil || f.i < lb.fail.i {
			lb.fail = &f
		}
		mu.Unlock()
		lb.failed.Store(true)
	}
	for t := range lb.tasks {
		if lb.failed.Load() {
			continue // drained: nothing after a failure counts
		}
		k := t.k
		if t.end {
			wg.Wait()
			if lb.failed.Load() {
				continue
			}
			parent, suffix := t.parent, t.suffix
			if k >= 3 {
				parent, suffix = parents, suffixes // every entry's, the tasks being contiguous
			}
			parents, suffixes, linker = nil, nil, nil
			lb.links.Parent = append(lb.links.Parent, parent)
			lb.links.Suffix = append(lb.links.Suffix, suffix)
			lb.links.Starts = append(lb.links.Starts, tables.StartsOf(parent, below))
			lower, below = t.words, len(t.words)/k
			continue
		}
		if linker == nil {
			linker = lb.links.OrderLinker(k, lower)
		}
		n := len(t.words) / k
		end := t.lo + n
		if end > cap(parents) {
			// Moved once no goroutine fills the old arrays.
			wg.Wait()
			size := max(end, t.room, cap(parents)+cap(parents)/2)
			was, wasSuffixes := parents, suffixes
			parents, suffixes = make([]int32, 0, size), make([]int32, 0, size)
			hugePagesOf(parents)
			hugePagesOf(suffixes)
			parents, suffixes = append(parents, was...), append(suffixes, wasSuffixes...)
		}
		parents, suffixes = parents[:end], suffixes[:end]
		parent, suffix := parents[t.lo:end], suffixes[t.lo:end]
		sem <- struct{}{}
		wg.Add(1)
		go func(l *tables.OrderLinker) {
			defer wg.Done()
			bad := l.Link(t.words, parent, suffix)
			prefixMissing := bad >= 0
			if !prefixMissing {
				bad = n
			}
			for i, s := range suffix[:bad] {
				if s < 0 {
					bad, prefixMissing = i, false
					break
				}
			}
			if bad < n {
				f := linkFailure{k: k, i: t.lo + bad, prefixMissing: prefixMissing}
				if t.where != nil {
					f.where = t.where[bad]
				}
				failAt(f)
			}
			if t.where != nil {
				select {
				case lb.spare <- t.where:
				default:
				}
			}
			<-sem
		}(linker)
	}
	wg.Wait()
}
