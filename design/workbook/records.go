package workbook

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
)

// recordReader reads the records of a CSV file (RFC 4180, as encoding/csv
// reads them with FieldsPerRecord −1 and strict quotes: empty lines
// skipped, CRLF taken as LF, quoted fields may hold commas, doubled quotes
// and line breaks) without allocating per record: a line without a quote
// is split in place in the read buffer, and only quoted records are copied.
// The fields returned are valid until the next call. It exists because
// encoding/csv allocates a string per record, which dominated reading a
// million-row table.
type recordReader struct {
	br     *bufio.Reader
	src    *countReader
	comma  byte
	line   int // physical lines read
	fields [][]byte
	long   []byte // a line longer than the read buffer
	cur    []byte // the quoted record's current line (copied)
	own    []byte // the quoted record's fields
	ends   []int
}

func newRecordReader(r io.Reader, comma byte) *recordReader {
	src := &countReader{r: r}
	return &recordReader{br: bufio.NewReaderSize(src, 1<<16), comma: comma, src: src}
}

// offset returns the number of bytes of input consumed so far.
func (rr *recordReader) offset() int64 { return rr.src.n - int64(rr.br.Buffered()) }

// countReader counts the bytes read through it.
type countReader struct {
	r io.Reader
	n int64
}

func (c *countReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}

// readLine returns the next physical line without its line break, and
// whether one was read.
func (rr *recordReader) readLine() ([]byte, bool, error) {
	b, err := rr.br.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		rr.long = append(rr.long[:0], b...)
		for err == bufio.ErrBufferFull {
			b, err = rr.br.ReadSlice('\n')
			rr.long = append(rr.long, b...)
		}
		b = rr.long
	}
	if len(b) == 0 {
		if err == nil || err == io.EOF {
			return nil, false, io.EOF
		}
		return nil, false, err
	}
	if err != nil && err != io.EOF {
		return nil, false, err
	}
	rr.line++
	if b[len(b)-1] == '\n' {
		b = b[:len(b)-1]
	}
	if len(b) > 0 && b[len(b)-1] == '\r' {
		b = b[:len(b)-1] // CRLF, or a CR at the end of the file
	}
	return b, true, nil
}

// read returns the fields of the next record and the line it starts on;
// io.EOF after the last.
func (rr *recordReader) read() ([][]byte, int, error) {
	for {
		b, ok, err := rr.readLine()
		if !ok {
			return nil, 0, err
		}
		if len(b) == 0 {
			continue // csv skips empty lines
		}
		start := rr.line
		if bytes.IndexByte(b, '"') >= 0 {
			return rr.quoted(b, start)
		}
		rr.fields = rr.fields[:0]
		for {
			i := bytes.IndexByte(b, rr.comma)
			if i < 0 {
				rr.fields = append(rr.fields, b)
				break
			}
			rr.fields = append(rr.fields, b[:i])
			b = b[i+1:]
		}
		return rr.fields, start, nil
	}
}

// quoted parses a record with quotes, reading further lines while a
// quoted field is open.
func (rr *recordReader) quoted(b []byte, start int) ([][]byte, int, error) {
	rr.cur = append(rr.cur[:0], b...)
	cur := rr.cur
	rr.own, rr.ends = rr.own[:0], rr.ends[:0]
	perr := func(line int, e error) error {
		return fmt.Errorf("record on line %d: parse error on line %d: %w", start, line, e)
	}
	pos := 0
	for {
		if pos < len(cur) && cur[pos] == '"' {
			pos++
			for {
				i := bytes.IndexByte(cur[pos:], '"')
				if i < 0 {
					// The field goes on past the line break.
					rr.own = append(rr.own, cur[pos:]...)
					rr.own = append(rr.own, '\n')
					next, ok, err := rr.readLine()
					if err != nil && err != io.EOF {
						return nil, 0, err
					}
					if !ok {
						return nil, 0, perr(rr.line, csv.ErrQuote)
					}
					rr.cur = append(rr.cur[:0], next...)
					cur, pos = rr.cur, 0
					continue
				}
				rr.own = append(rr.own, cur[pos:pos+i]...)
				pos += i + 1
				if pos < len(cur) && cur[pos] == '"' {
					rr.own = append(rr.own, '"')
					pos++
					continue
				}
				break
			}
			rr.ends = append(rr.ends, len(rr.own))
			switch {
			case pos == len(cur):
				return rr.split(), start, nil
			case cur[pos] == rr.comma:
				pos++
				if pos == len(cur) {
					rr.ends = append(rr.ends, len(rr.own))
					return rr.split(), start, nil
				}
				continue
			default:
				return nil, 0, perr(rr.line, csv.ErrQuote)
			}
		}
		i := bytes.IndexByte(cur[pos:], rr.comma)
		end := len(cur)
		if i >= 0 {
			end = pos + i
		}
		field := cur[pos:end]
		if bytes.IndexByte(field, '"') >= 0 {
			return nil, 0, perr(rr.line, csv.ErrBareQuote)
		}
		rr.own = append(rr.own, field...)
		rr.ends = append(rr.ends, len(rr.own))
		if i < 0 {
			return rr.split(), start, nil
		}
		pos = end + 1
		if pos == len(cur) {
			rr.ends = append(rr.ends, len(rr.own))
			return rr.split(), start, nil
		}
	}
}

func (rr *recordReader) split() [][]byte {
	rr.fields = rr.fields[:0]
	s := 0
	for _, e := range rr.ends {
		rr.fields = append(rr.fields, rr.own[s:e])
		s = e
	}
	return rr.fields
}

// pipedRecords reads the records of rr on a goroutine of its own, a batch
// at a time, so that finding the lines and fields (there) and handling the
// fields (in the caller) run on two cores. next returns what rr.read would,
// in the same order, with the same errors.
type pipedRecords struct {
	full, free chan *recordBatch
	done       chan struct{}
	exited     chan struct{} // closed when the reading goroutine ends
	cur        *recordBatch
	at         int // next record of cur
	rec        [][]byte
	offset     int64 // input consumed up to the end of cur
	records    int   // records up to the end of cur
}

// recordBatch holds consecutive records: the bytes of their fields end to
// end, each field's end, and each record's first field and line.
type recordBatch struct {
	buf    []byte
	ends   []int
	starts []int // record r has fields starts[r] to starts[r+1]−1
	lines  []int
	offset int64
	err    error // after the last record; io.EOF at the end of the input
}

const (
	batchRecords = 4096
	batchBytes   = 1 << 18
)

func pipeRecords(rr *recordReader) *pipedRecords {
	p := &pipedRecords{full: make(chan *recordBatch, 2), free: make(chan *recordBatch, 3), done: make(chan struct{}), exited: make(chan struct{})}
	for range 3 {
		p.free <- &recordBatch{buf: make([]byte, 0, batchBytes+1024)}
	}
	go func() {
		defer close(p.exited)
		for {
			var b *recordBatch
			select {
			case b = <-p.free:
			case <-p.done:
				return
			}
			b.buf, b.ends, b.starts, b.lines, b.err = b.buf[:0], b.ends[:0], b.starts[:0], b.lines[:0], nil
			for len(b.lines) < batchRecords && len(b.buf) < batchBytes {
				select {
				case <-p.done:
					return // the caller stopped: read no further
				default:
				}
				rec, line, err := rr.read()
				if err != nil {
					b.err = err
					break
				}
				b.starts = append(b.starts, len(b.ends))
				for _, f := range rec {
					b.buf = append(b.buf, f...)
					b.ends = append(b.ends, len(b.buf))
				}
				b.lines = append(b.lines, line)
			}
			b.starts = append(b.starts, len(b.ends))
			b.offset = rr.offset()
			select {
			case p.full <- b:
			case <-p.done:
				return
			}
			if b.err != nil {
				return
			}
		}
	}()
	return p
}

// next returns the fields of the next record (valid until the next call)
// and the line it starts on; io.EOF after the last.
func (p *pipedRecords) next() ([][]byte, int, error) {
	for p.cur == nil || p.at == len(p.cur.lines) {
		if p.cur != nil {
			if p.cur.err != nil {
				return nil, 0, p.cur.err
			}
			p.free <- p.cur
		}
		p.cur, p.at = <-p.full, 0
		p.offset = p.cur.offset
		p.records += len(p.cur.lines)
	}
	b, r := p.cur, p.at
	p.at++
	p.rec = p.rec[:0]
	start := 0
	if first := b.starts[r]; first > 0 {
		start = b.ends[first-1]
	}
	for _, e := range b.ends[b.starts[r]:b.starts[r+1]] {
		p.rec = append(p.rec, b.buf[start:e])
		start = e
	}
	return p.rec, b.lines[r], nil
}

// stop ends the reading goroutine and waits for it (at most the read in
// progress), so that it never reads from the input after the caller
// returns.
func (p *pipedRecords) stop() {
	close(p.done)
	<-p.exited
}
