package workbook

import (
	"archive/zip"
	"bytes"
	"compress/flate"
	"io"
	"runtime"
	"sync"

	"github.com/xuri/excelize/v2"
)

// zipLevel is the deflate level of the workbook's parts. Level 2 of
// compress/flate packs a workbook of 100,000 units about three times as
// fast as the default level 6, into a file about a sixth larger (4.8 MB
// instead of 4.1 MB).
const zipLevel = 2

// segmentSize is how much of a part one compressor takes at a time.
const segmentSize = 1 << 20

// newZip returns the zip writer of a workbook: archive/zip, with each part
// deflated at zipLevel in segments compressed side by side, one per core
// (see segmented).
func newZip(w io.Writer) excelize.ZipWriter {
	zw := zip.NewWriter(w)
	pool := &flatePool{}
	n := runtime.GOMAXPROCS(0)
	zw.RegisterCompressor(zip.Deflate, func(out io.Writer) (io.WriteCloser, error) {
		return newSegmented(out, pool, n, segmentSize), nil
	})
	return zw
}

// flatePool keeps compressors and segment buffers for reuse across the
// parts of a workbook: a compressor holds a few hundred kilobytes of
// tables, a segment up to segmentSize of input and its output.
type flatePool struct {
	mu       sync.Mutex
	free     []*flate.Writer
	segments []*segment
}

func (p *flatePool) get(w io.Writer) (*flate.Writer, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if k := len(p.free); k > 0 {
		fw := p.free[k-1]
		p.free = p.free[:k-1]
		fw.Reset(w)
		return fw, nil
	}
	return flate.NewWriter(w, zipLevel)
}

func (p *flatePool) put(fw *flate.Writer) {
	p.mu.Lock()
	p.free = append(p.free, fw)
	p.mu.Unlock()
}

// segment returns a segment to fill, empty, with an input buffer of
// capacity size.
func (p *flatePool) segment(size int) *segment {
	p.mu.Lock()
	defer p.mu.Unlock()
	if k := len(p.segments); k > 0 {
		sg := p.segments[k-1]
		p.segments = p.segments[:k-1]
		sg.in, sg.err, sg.done = sg.in[:0], nil, make(chan struct{})
		sg.out.Reset()
		return sg
	}
	return &segment{in: make([]byte, 0, size), done: make(chan struct{})}
}

// release keeps a written segment for reuse.
func (p *flatePool) release(sg *segment) {
	p.mu.Lock()
	p.segments = append(p.segments, sg)
	p.mu.Unlock()
}

// segmented is a deflate stream (RFC 1951) whose input is cut into
// segments compressed at the same time, at most n at once. Every segment
// but the last ends with a sync flush, which closes its last block and
// pads the output to a byte boundary with an empty stored block, so the
// next segment's blocks can follow it: the segments in order are one
// deflate stream, read by any inflater as if one compressor had written it
// (the way pigz compresses on several cores). A segment starts without the
// one before it in its window, which costs a few bytes at each boundary.
type segmented struct {
	out     io.Writer
	pool    *flatePool
	n, size int
	cur     *segment   // the segment being filled, or nil
	pending []*segment // segments started and not yet written, in order
	err     error      // the first error; every later call returns it
}

// segment is one segment's input and, once done is closed, its compressed
// form or the error that stopped it.
type segment struct {
	in   []byte
	out  bytes.Buffer
	err  error
	done chan struct{}
}

func newSegmented(out io.Writer, pool *flatePool, n, size int) *segmented {
	return &segmented{out: out, pool: pool, n: max(n, 1), size: size}
}

func (s *segmented) Write(p []byte) (int, error) {
	written := 0
	for len(p) > 0 && s.err == nil {
		if s.cur == nil {
			s.cur = s.pool.segment(s.size)
		}
		k := min(len(p), s.size-len(s.cur.in))
		s.cur.in = append(s.cur.in, p[:k]...)
		p = p[k:]
		written += k
		if len(s.cur.in) == s.size {
			s.start(false)
		}
	}
	return written, s.err
}

// start compresses the segment being filled as the next one, the stream's
// last if last is set, once fewer than n segments are in hand.
func (s *segmented) start(last bool) {
	if len(s.pending) >= s.n {
		s.writeOldest()
	}
	sg := s.cur
	if sg == nil {
		sg = s.pool.segment(0)
	}
	s.cur = nil
	s.pending = append(s.pending, sg)
	go func() {
		defer close(sg.done)
		fw, err := s.pool.get(&sg.out)
		if err != nil {
			sg.err = err
			return
		}
		defer s.pool.put(fw)
		if _, err := fw.Write(sg.in); err != nil {
			sg.err = err
			return
		}
		if last {
			sg.err = fw.Close()
		} else {
			sg.err = fw.Flush()
		}
	}()
}

// writeOldest waits for the oldest segment in hand and writes it out.
func (s *segmented) writeOldest() {
	sg := s.pending[0]
	<-sg.done
	s.pending = s.pending[1:]
	if s.err == nil {
		s.err = sg.err
	}
	if s.err == nil {
		_, s.err = s.out.Write(sg.out.Bytes())
	}
	s.pool.release(sg)
}

// Close compresses the rest as the last segment and writes out every
// segment in hand.
func (s *segmented) Close() error {
	if s.err == nil {
		s.start(true)
	}
	for len(s.pending) > 0 {
		s.writeOldest()
	}
	return s.err
}
