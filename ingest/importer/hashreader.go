package importer

import (
	"fmt"
	"hash"
	"io"
)

// hashingReader reads a file once for the parser: it hashes every byte
// the first time it is read (a seek back and a second read, as the reader's
// date-order scan does on a regular file, hash nothing twice), counts the
// bytes for progress and fails past max.
type hashingReader struct {
	r      io.Reader
	h      hash.Hash
	max    int64
	path   string
	pos    int64 // offset of the next byte read
	hashed int64 // bytes hashed: [0, hashed)
	n      int64 // furthest offset read, for progress
}

// errTooLarge is the error past the size limit.
func (c *hashingReader) errTooLarge() error {
	return fmt.Errorf("import %s: more than --max-mib %d MiB read (an endless pipe?); split the export or raise --max-mib", c.path, c.max>>20)
}

func (c *hashingReader) Read(p []byte) (int, error) {
	if c.pos >= c.max {
		// At the limit: only the end of the input may follow.
		var one [1]byte
		if n, err := c.r.Read(one[:]); n == 0 && err != nil {
			return 0, err
		}
		return 0, c.errTooLarge()
	}
	if int64(len(p)) > c.max-c.pos {
		p = p[:c.max-c.pos]
	}
	n, err := c.r.Read(p)
	if end := c.pos + int64(n); end > c.hashed {
		if c.pos > c.hashed {
			return n, fmt.Errorf("import %s: read skipped bytes %d..%d, the hash would miss them", c.path, c.hashed, c.pos)
		}
		c.h.Write(p[c.hashed-c.pos : n])
		c.hashed = end
	}
	c.pos += int64(n)
	c.n = max(c.n, c.pos)
	return n, err
}

// seekingHashReader is a hashingReader over a regular file, which may seek.
type seekingHashReader struct{ *hashingReader }

func (s seekingHashReader) Seek(offset int64, whence int) (int64, error) {
	sk, ok := s.r.(io.Seeker)
	if !ok {
		return 0, fmt.Errorf("import %s: not seekable", s.path)
	}
	pos, err := sk.Seek(offset, whence)
	if err == nil {
		s.pos = pos
	}
	return pos, err
}
