package csvfile

import (
	"bufio"
	"bytes"
	"io"
)

// recStatus is the outcome of reading one record.
type recStatus uint8

const (
	recOK        recStatus = iota
	recBlank               // a line of nothing but spaces
	recEOF                 // end of input
	recQuotes              // malformed or unterminated quotes
	recTooLong             // longer than maxRecordBytes; skipped to the next line
	recOpenQuote           // a quote not closed within maxRecordLines lines (or before the end): the record's first line is dropped and reading resumes on the next
)

// maxRecordBytes bounds one record, so that a runaway quote or a file with
// no line breaks cannot make the reader hold the whole input.
const maxRecordBytes = 1 << 20

// maxRecordLines bounds the physical lines one record may span through
// line breaks inside quotes. A stray quote would otherwise join every line
// after it into one field up to maxRecordBytes; past this many lines (or at
// the end of the input) the record's first line is rejected and reading
// resumes on its second line. Trend exports put line breaks inside quotes
// only in comment fields, and rarely more than a few (common practice, no
// source).
const maxRecordLines = 16

// splitter cuts a stream into records of fields, RFC 4180 style: fields may
// be quoted, and quoted fields may hold delimiters, doubled quotes and line
// breaks. Lines end with LF or CRLF.
//
// The fast path takes a whole line from the bufio buffer without copying and,
// when it holds no quote, cuts it at the delimiters in place: fields point
// into the bufio buffer and stay valid until the next call. Lines with
// quotes, or longer than the buffer, go through a state machine that copies
// into buf.
type splitter struct {
	br      *bufio.Reader
	delim   byte
	nl      int      // line breaks consumed so far
	start   int      // line number (1-based) where the current record starts
	noNL    bool     // the current record ended at the end of input, without a line break
	fields  [][]byte // fields of the current record, trimmed of spaces
	raw     []byte   // the current line, for messages (fast path only; nil otherwise)
	lazy    bool     // leave quote-free-looking lines whole until split is called
	pendSp  bool     // raw is not split into fields yet
	full    []byte   // raw with its line break, and the error ReadSlice gave with it
	fullErr error
	buf     []byte
	ends    []int

	// Resynchronisation after a quote that does not close: the bytes of
	// the current record as read (general path only), and the lines read
	// past its first one, handed out again before br.
	seen []byte
	pend []byte
}

func newSplitter(br *bufio.Reader, delim byte) *splitter {
	return &splitter{br: br, delim: delim, fields: make([][]byte, 0, 16)}
}

// next reads the next record. A non-nil error is a read error of the
// underlying reader.
func (s *splitter) next() (recStatus, error) {
	s.start = s.nl + 1
	s.noNL = false
	s.raw = nil
	s.pendSp = false
	line, err := s.readSlice()
	switch err {
	case nil:
		s.nl++
	case io.EOF:
		if len(line) == 0 {
			return recEOF, nil
		}
		s.noNL = true
	case bufio.ErrBufferFull:
		return s.general(line, err)
	default:
		return recEOF, err
	}
	if !s.lazy && bytes.IndexByte(line, '"') >= 0 {
		if !s.noNL {
			s.nl-- // general counts the line break itself
		}
		return s.general(line, err)
	}
	s.full, s.fullErr = line, err
	if n := len(line); n > 0 && line[n-1] == '\n' {
		line = line[:n-1]
		if n > 1 && line[n-2] == '\r' {
			line = line[:n-2]
		}
	}
	if len(line) == 0 || line[0] == ' ' || line[0] == '\t' {
		if len(trimSpace(line)) == 0 {
			return recBlank, nil
		}
	}
	s.raw = line
	s.pendSp = true
	if !s.lazy {
		s.cut()
	}
	return recOK, nil
}

// readSlice is bufio.Reader.ReadSlice('\n') on the lines handed back by a
// resynchronisation, then on br. A piece of pend without a line break is
// returned with bufio.ErrBufferFull: the rest of its line follows from br.
func (s *splitter) readSlice() ([]byte, error) {
	if len(s.pend) > 0 {
		if i := bytes.IndexByte(s.pend, '\n'); i >= 0 {
			line := s.pend[:i+1]
			s.pend = s.pend[i+1:]
			return line, nil
		}
		line := s.pend
		s.pend = nil
		return line, bufio.ErrBufferFull
	}
	return s.br.ReadSlice('\n')
}

// lines is the number of physical lines the current record spans.
func (s *splitter) lines() int {
	n := s.nl - s.start + 1
	if s.noNL {
		n++
	}
	return n
}

// split finishes a line that next left whole in lazy mode: a line without
// quotes is cut in place, a line with quotes goes through the general
// parser, which may read on for a quoted line break.
func (s *splitter) split() (recStatus, error) {
	if !s.pendSp {
		return recOK, nil
	}
	if bytes.IndexByte(s.raw, '"') >= 0 {
		s.pendSp = false
		s.raw = nil
		if !s.noNL {
			s.nl--
		}
		s.noNL = false
		return s.general(s.full, s.fullErr)
	}
	s.cut()
	return recOK, nil
}

// cut splits the quote-free line raw into fields.
func (s *splitter) cut() {
	s.pendSp = false
	line := s.raw
	d := s.delim
	f := s.fields[:0]
	start := 0
	for i := 0; i < len(line); i++ {
		if line[i] == d {
			f = append(f, trimSpace(line[start:i]))
			start = i + 1
		}
	}
	s.fields = append(f, trimSpace(line[start:]))
}

func trimSpace(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// general parses a record that starts with chunk, reading more of the input
// as needed. err is the error ReadSlice returned with chunk.
func (s *splitter) general(chunk []byte, err error) (recStatus, error) {
	s.buf = s.buf[:0]
	s.ends = s.ends[:0]
	s.seen = append(s.seen[:0], chunk...)
	var (
		inQ        bool // inside a quoted field
		qPend      bool // a quote closed at the very end of a chunk: maybe the first of a doubled pair
		afterQ     bool // a quoted field closed; only spaces may follow before a delimiter
		fieldStart = true
		fieldBegin int
		sawQuote   bool
		bad        bool
	)
	for {
		i := 0
		if qPend {
			qPend = false
			if len(chunk) > 0 && chunk[0] == '"' {
				s.buf = append(s.buf, '"')
				i = 1
			} else {
				inQ, afterQ = false, true
			}
		}
		for ; i < len(chunk); i++ {
			c := chunk[i]
			if inQ {
				if c == '"' {
					if i+1 < len(chunk) {
						if chunk[i+1] == '"' {
							s.buf = append(s.buf, '"')
							i++
							continue
						}
					} else if err == bufio.ErrBufferFull {
						qPend = true
						continue
					}
					inQ, afterQ = false, true
					continue
				}
				if c == '\n' {
					s.nl++
				}
				s.buf = append(s.buf, c)
				continue
			}
			switch {
			case c == s.delim:
				s.ends = append(s.ends, len(s.buf))
				fieldStart, afterQ = true, false
				fieldBegin = len(s.buf)
			case c == '\n':
				s.nl++
				return s.finish(sawQuote, bad)
			case c == '\r':
				// dropped outside quotes: CRLF line ends
			case afterQ:
				if c != ' ' && c != '\t' {
					bad = true
				}
			case c == '"' && fieldStart:
				inQ, sawQuote = true, true
				s.buf = s.buf[:fieldBegin] // spaces before the opening quote
			default:
				if c != ' ' && c != '\t' {
					fieldStart = false
				}
				s.buf = append(s.buf, c)
			}
		}
		if err == io.EOF {
			s.noNL = true
			if inQ && !qPend {
				return s.unclosed(), nil
			}
			return s.finish(sawQuote, bad)
		}
		if len(s.buf) > maxRecordBytes {
			if s.nl >= s.start {
				return s.unclosed(), nil // the record has a line break: resume on its second line
			}
			s.fail(recTooLong)
			return s.skipLine(err)
		}
		if inQ && s.nl-s.start+1 >= maxRecordLines {
			return s.unclosed(), nil
		}
		chunk, err = s.readSlice()
		s.seen = append(s.seen, chunk...)
		switch err {
		case nil, bufio.ErrBufferFull:
		case io.EOF:
			if len(chunk) == 0 {
				s.noNL = true
				if inQ && !qPend {
					return s.unclosed(), nil
				}
				if qPend {
					afterQ = true
				}
				return s.finish(sawQuote, bad)
			}
		default:
			return recEOF, err
		}
	}
}

// unclosed rejects a record whose quote did not close within
// maxRecordLines lines or before the end of the input. Only its first
// physical line is rejected: the lines read after it are handed out again,
// so that one stray quote costs one row, not every row up to the limit.
// A single line cut by the end of the input is a truncated last line.
func (s *splitter) unclosed() recStatus {
	if bytes.IndexByte(s.seen, '\n') < 0 {
		s.noNL = true
		return s.fail(recQuotes)
	}
	return s.resync(recOpenQuote)
}

// resync rejects the first physical line of the current record with st
// and hands the lines read after it out again.
func (s *splitter) resync(st recStatus) recStatus {
	first := s.seen
	if i := bytes.IndexByte(s.seen, '\n'); i >= 0 {
		first = s.seen[:i+1]
		if rest := s.seen[i+1:]; len(rest) > 0 {
			// rest was read from pend's front or from br: it goes back
			// ahead of what pend still holds.
			s.pend = append(append(make([]byte, 0, len(rest)+len(s.pend)), rest...), s.pend...)
		}
		// The record is its first line, which ends with a line break.
		s.nl = s.start
		s.noNL = false
	}
	s.fields = s.fields[:0]
	s.raw = first[:min(len(first), 80)]
	return st
}

// skipLine drops the rest of the current physical line after a record grew
// too long.
func (s *splitter) skipLine(err error) (recStatus, error) {
	for err == bufio.ErrBufferFull {
		var chunk []byte
		chunk, err = s.readSlice()
		if err == nil && len(chunk) > 0 {
			s.nl++
			return recTooLong, nil
		}
	}
	if err != nil && err != io.EOF {
		return recEOF, err
	}
	if err == io.EOF {
		s.noNL = true
	}
	return recTooLong, nil
}

// fail keeps the start of a bad record for messages.
func (s *splitter) fail(st recStatus) recStatus {
	s.fields = s.fields[:0]
	s.raw = s.buf[:min(len(s.buf), 80)]
	return st
}

func (s *splitter) finish(sawQuote, bad bool) (recStatus, error) {
	if bad {
		if s.lines() > 1 {
			return s.resync(recQuotes), nil // a line break inside the bad quotes: resume on the record's second line
		}
		return s.fail(recQuotes), nil
	}
	if !sawQuote && len(s.ends) == 0 && len(trimSpace(s.buf)) == 0 {
		return recBlank, nil
	}
	s.ends = append(s.ends, len(s.buf))
	f := s.fields[:0]
	begin := 0
	for _, e := range s.ends {
		f = append(f, trimSpace(s.buf[begin:e]))
		begin = e
	}
	s.fields = f
	return recOK, nil
}
