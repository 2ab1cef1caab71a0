package csvfile

import (
	"errors"
	"fmt"
)

// File-level problems. NewReader (and Next, for read errors) returns them
// inside a *FileError; test with errors.Is.
var (
	ErrEmpty            = errors.New("file is empty")
	ErrNotText          = errors.New("not a delimited text file")
	ErrNoDelimiter      = errors.New("no field delimiter found")
	ErrHeader           = errors.New("unusable header")
	ErrNoTimeColumn     = errors.New("no time column")
	ErrTimeFormat       = errors.New("unrecognised timestamps")
	ErrNeedLocation     = errors.New("timestamps have no UTC offset")
	ErrAmbiguousDate    = errors.New("day and month order cannot be told")
	ErrAmbiguousDecimal = errors.New("decimal separator cannot be told")
	ErrRowTooLong       = errors.New("data row too long to detect the format")
	ErrRead             = errors.New("read error")
)

// FileError is a problem with a whole file: it names the file, the line when
// one is to blame (0 otherwise), what is wrong and how to fix it.
type FileError struct {
	File   string
	Line   int
	Err    error  // one of the Err... sentinels above
	Detail string // what was found
	Fix    string // what to do about it
	Cause  error  // underlying error, if any (I/O, gzip)
}

func (e *FileError) Error() string {
	where := e.File
	if e.Line > 0 {
		where = fmt.Sprintf("%s line %d", e.File, e.Line)
	}
	s := where + ": " + e.Err.Error()
	if e.Detail != "" {
		s += ": " + e.Detail
	}
	if e.Cause != nil {
		s += ": " + e.Cause.Error()
	}
	if e.Fix != "" {
		s += "; " + e.Fix
	}
	return s
}

// Unwrap gives the sentinel and the cause to errors.Is and errors.As.
func (e *FileError) Unwrap() []error {
	if e.Cause != nil {
		return []error{e.Err, e.Cause}
	}
	return []error{e.Err}
}
