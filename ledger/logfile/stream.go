package logfile

import (
	"context"
	"errors"
	"io"

	"hulltally/ledger/blocks"
)

// BlockStream parses a samples file over several goroutines and hands its
// blocks over in file order, with exactly the blocks and the first error
// (same message, line and column) that ReadBlock would give.
//
// One goroutine reads the lines (the reader, its hash and the line checks
// are sequential) and deals them out in slots of BlockSamples lines;
// workers parse slots into blocks, each with its own parser; Next puts the
// blocks back in order and checks what a worker cannot see: that the
// first time of a slot comes after the last time of the one before. Each
// slot carries its block from the start, taken in file order, so a worker
// never waits for a block and the stream cannot deadlock; the number of
// slots bounds the memory (slots × BlockSamples lines and blocks).
type BlockStream struct {
	sr     *SampleReader
	ctx    context.Context
	cancel context.CancelFunc
	free   chan *slot
	parsed chan *slot
	// waiting holds parsed slots that came before their turn.
	waiting map[int64]*slot
	next    int64
	cur     *slot
	have    bool
	prevT   int64
	// atEOF: the block handed over last was the file's last.
	atEOF bool
	err   error
	done  chan struct{}
}

// slot is a run of lines and the block they parse into.
type slot struct {
	seq   int64
	buf   []byte // the lines, end to end
	ends  []int  // end of each line in buf
	lines []int  // line number of each line
	tail  error  // a read error after the last line (or io.EOF)
	b     *blocks.Block
	err   error // the first parse error
	first int64 // time of the first line
	// firstOK: the first line's time was parsed (its order against the
	// slot before is then checked before any later error).
	firstOK bool
	last    int64
}

// Stream parses the rest of the file over workers goroutines (at least
// one). Stop it with Close. The reader must not be used directly after.
func (sr *SampleReader) Stream(ctx context.Context, workers int) *BlockStream {
	workers = max(workers, 1)
	sr.streaming = true
	ctx, cancel := context.WithCancel(ctx)
	n := workers + 2
	s := &BlockStream{sr: sr, ctx: ctx, cancel: cancel, free: make(chan *slot, n), parsed: make(chan *slot, n),
		waiting: map[int64]*slot{}, done: make(chan struct{})}
	for range n {
		s.free <- &slot{b: sr.NewBlock()}
	}
	work := make(chan *slot, n)
	running := make(chan struct{}, workers+1)
	go func() {
		defer func() { running <- struct{}{} }()
		s.read(work)
	}()
	for range workers {
		go func() {
			defer func() { running <- struct{}{} }()
			p := sr.p
			p.fields = nil
			for sl := range work {
				s.parse(&p, sl)
				select {
				case s.parsed <- sl:
				case <-ctx.Done():
					return
				}
			}
		}()
	}
	go func() {
		for range workers + 1 {
			<-running
		}
		close(s.done)
	}()
	return s
}

// read deals the lines out in slots, in order, until the end of the file,
// a read error or a cancel.
func (s *BlockStream) read(work chan<- *slot) {
	defer close(work)
	lr, per := s.sr.lr, s.sr.opt.BlockSamples
	total := int64(0)
	for seq := int64(0); ; seq++ {
		var sl *slot
		select {
		case sl = <-s.free:
		case <-s.ctx.Done():
			return
		}
		sl.seq, sl.buf, sl.ends, sl.lines, sl.tail = seq, sl.buf[:0], sl.ends[:0], sl.lines[:0], nil
		for len(sl.ends) < per {
			line, err := lr.next()
			if err != nil {
				if err == io.EOF && total == 0 {
					err = s.sr.errHeaderOnly()
				}
				sl.tail = err
				break
			}
			sl.buf = append(sl.buf, line...)
			sl.ends = append(sl.ends, len(sl.buf))
			sl.lines = append(sl.lines, lr.line)
			total++
		}
		select {
		case work <- sl:
		case <-s.ctx.Done():
			return
		}
		if sl.tail != nil {
			return
		}
	}
}

// parse parses a slot's lines into its block.
func (s *BlockStream) parse(p *rowParser, sl *slot) {
	b := sl.b
	b.Reset()
	sl.err, sl.firstOK = nil, false
	start := 0
	for i, end := range sl.ends {
		t, ok, err := p.row(b, sl.buf[start:end], sl.lines[i], i > 0, sl.last)
		start = end
		if i == 0 {
			sl.first, sl.firstOK = t, ok
		}
		if err != nil {
			sl.err = err
			return
		}
		sl.last = t
	}
}

// Next returns the next block in file order, or io.EOF after the last. The
// block is valid until the next call; after an error every call returns
// it.
func (s *BlockStream) Next() (*blocks.Block, error) {
	if s.err != nil {
		return nil, s.err
	}
	if s.cur != nil {
		s.free <- s.cur // never blocks: the slot came from free
		s.cur = nil
	}
	if s.atEOF {
		s.err = io.EOF
		return nil, io.EOF
	}
	sl, ok := s.waiting[s.next]
	for !ok {
		select {
		case got := <-s.parsed:
			s.waiting[got.seq] = got
		case <-s.ctx.Done():
			s.err = s.ctx.Err()
			return nil, s.err
		}
		sl, ok = s.waiting[s.next]
	}
	delete(s.waiting, s.next)
	s.next++
	s.cur = sl
	if len(sl.ends) > 0 && s.have && sl.firstOK {
		// The first row's order, where a reader going left to right
		// checks it: after the time is parsed, before any later field.
		if err := s.sr.p.order(sl.lines[0], sl.first, s.prevT); err != nil {
			return nil, s.fail(err)
		}
	}
	if sl.err != nil {
		return nil, s.fail(sl.err)
	}
	if sl.tail != nil && sl.tail != io.EOF {
		// As ReadBlock: a read error ends the stream at once, without
		// the rows before it in the same block.
		return nil, s.fail(sl.tail)
	}
	if len(sl.ends) == 0 {
		s.err = io.EOF
		return nil, io.EOF
	}
	s.have, s.prevT = true, sl.last
	s.sr.rows += int64(len(sl.ends))
	s.atEOF = sl.tail == io.EOF
	return sl.b, nil
}

// fail ends the stream with err.
func (s *BlockStream) fail(err error) error {
	s.err = err
	s.cancel()
	return err
}

// Close stops the stream and waits for its goroutines (the reader stops
// after the line it is reading). It returns nil.
func (s *BlockStream) Close() error {
	s.cancel()
	<-s.done
	if s.err == nil {
		s.err = errors.New("logfile: stream closed")
	}
	return nil
}
