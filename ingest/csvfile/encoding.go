package csvfile

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"io"
	"unicode/utf16"
	"unicode/utf8"
)

// bufSize is the read buffer of a Reader and the size of the head it sniffs.
const bufSize = 128 << 10

// decode wraps src so that it yields UTF-8 text: it unpacks gzip, turns
// UTF-16 with a byte-order mark into UTF-8 and drops a UTF-8 byte-order mark.
// It returns the reader, a name for the encoding and whether the bytes are
// the file's own (so a seek on the file is a seek on the text).
func decode(src io.Reader, name string) (br *bufio.Reader, enc string, direct bool, err error) {
	br = bufio.NewReaderSize(src, bufSize)
	direct = true
	enc = "UTF-8"
	if m, _ := br.Peek(2); len(m) == 2 && m[0] == 0x1f && m[1] == 0x8b {
		gz, gerr := gzip.NewReader(br)
		if gerr != nil {
			return nil, "", false, &FileError{File: name, Err: ErrNotText, Detail: "damaged gzip data", Cause: gerr,
				Fix: "decompress it by hand to check it, or export it again"}
		}
		br = bufio.NewReaderSize(gz, bufSize)
		direct = false
		enc = "UTF-8 in gzip"
	}
	m, _ := br.Peek(3)
	switch {
	case bytes.HasPrefix(m, []byte{0xef, 0xbb, 0xbf}):
		_, _ = br.Discard(3)
		enc += " with byte-order mark"
	case bytes.HasPrefix(m, []byte{0xff, 0xfe}), bytes.HasPrefix(m, []byte{0xfe, 0xff}):
		big := m[0] == 0xfe
		_, _ = br.Discard(2)
		br = bufio.NewReaderSize(&utf16Reader{src: br, big: big, in: make([]byte, 16<<10)}, bufSize)
		direct = false
		enc = "UTF-16LE"
		if big {
			enc = "UTF-16BE"
		}
	}
	return br, enc, direct, nil
}

// utf16Reader turns UTF-16 into UTF-8, as spreadsheet programs write when
// asked for "Unicode text". Unpaired surrogates become U+FFFD.
type utf16Reader struct {
	src   io.Reader
	big   bool
	in    []byte
	carry [3]byte // undecoded bytes from the previous read
	nc    int
	out   []byte
	err   error
}

func (u *utf16Reader) unit(b []byte) rune {
	if u.big {
		return rune(b[0])<<8 | rune(b[1])
	}
	return rune(b[1])<<8 | rune(b[0])
}

func (u *utf16Reader) Read(p []byte) (int, error) {
	for len(u.out) == 0 {
		if u.err != nil {
			if u.nc > 0 {
				u.nc = 0
				u.out = utf8.AppendRune(u.out[:0], utf8.RuneError)
				continue
			}
			return 0, u.err
		}
		n := copy(u.in, u.carry[:u.nc])
		m, err := u.src.Read(u.in[n:])
		u.err = err
		b := u.in[:n+m]
		out := u.out[:0]
		i := 0
		for i+1 < len(b) {
			c := u.unit(b[i:])
			if c >= 0xd800 && c < 0xdc00 {
				if i+3 >= len(b) {
					if u.err == nil {
						break // wait for the low surrogate
					}
					out = utf8.AppendRune(out, utf8.RuneError)
					i += 2
					continue
				}
				if r := utf16.DecodeRune(c, u.unit(b[i+2:])); r != utf8.RuneError {
					out = utf8.AppendRune(out, r)
					i += 4
					continue
				}
				out = utf8.AppendRune(out, utf8.RuneError)
				i += 2
				continue
			}
			out = utf8.AppendRune(out, c) // a lone low surrogate gives U+FFFD
			i += 2
		}
		u.nc = copy(u.carry[:], b[i:])
		u.out = out
	}
	n := copy(p, u.out)
	u.out = u.out[n:]
	return n, nil
}

// checkHead refuses heads that are not delimited text, with a fix.
func checkHead(head []byte, name string) error {
	fe := func(err error, detail, fix string) error {
		return &FileError{File: name, Err: err, Detail: detail, Fix: fix}
	}
	if len(bytes.TrimSpace(head)) == 0 {
		if len(head) == 0 {
			return fe(ErrEmpty, "0 bytes", "export the trend log again; the file has no data")
		}
		return fe(ErrEmpty, "only blank lines", "export the trend log again; the file has no data")
	}
	const saveCSV = "open it in the spreadsheet program and save the sheet as CSV (comma or semicolon delimited)"
	switch {
	case bytes.HasPrefix(head, []byte("PK\x03\x04")):
		return fe(ErrNotText, "it is a ZIP archive, as an Excel .xlsx workbook is", saveCSV)
	case bytes.HasPrefix(head, []byte{0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1}):
		return fe(ErrNotText, "it is an old Excel .xls workbook", saveCSV)
	case bytes.HasPrefix(head, []byte("%PDF")):
		return fe(ErrNotText, "it is a PDF document", "export the trend log as CSV, not as a report")
	}
	t := bytes.TrimLeft(head, " \t\r\n")
	if len(t) > 0 && t[0] == '<' {
		low := bytes.ToLower(t[:min(len(t), 512)])
		switch {
		case bytes.HasPrefix(low, []byte("<!doctype html")), bytes.HasPrefix(low, []byte("<html")),
			bytes.Contains(low, []byte("<html")), bytes.Contains(low, []byte("<body")):
			return fe(ErrNotText, "it is an HTML page (often a login or error page saved in place of the export)",
				"download the export again while logged in, and check that the file opens as text with columns")
		case bytes.HasPrefix(low, []byte("<?xml")):
			return fe(ErrNotText, "it is an XML document (perhaps a spreadsheet saved as XML)", saveCSV)
		}
		return fe(ErrNotText, "it starts with markup ('<')", saveCSV)
	}
	ctrl := 0
	for _, c := range head {
		if c == 0 {
			return fe(ErrNotText, "it holds NUL bytes: binary data or UTF-16 text without a byte-order mark",
				"export the trend log as text (UTF-8 CSV)")
		}
		if c < 0x20 && c != '\t' && c != '\n' && c != '\r' && c != '\f' {
			ctrl++
		}
	}
	if ctrl*100 > len(head) {
		return fe(ErrNotText, "it holds many control bytes: binary data", "export the trend log as text (UTF-8 CSV)")
	}
	if bytes.IndexByte(head, '\n') < 0 && len(head) == bufSize {
		if bytes.IndexByte(head, '\r') >= 0 {
			return fe(ErrNotText, "lines end with a bare carriage return (old Mac style)",
				"convert the line ends to LF or CRLF")
		}
		return fe(ErrHeader, "no line break in the first 128 KiB", "check that this is a trend export with one row per line")
	}
	if bytes.IndexByte(head, '\n') < 0 && bytes.Count(head, []byte{'\r'}) > 1 {
		return fe(ErrNotText, "lines end with a bare carriage return (old Mac style)", "convert the line ends to LF or CRLF")
	}
	return nil
}
