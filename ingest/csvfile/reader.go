package csvfile

import (
	"bufio"
	"bytes"
	"io"
	"time"

	"github.com/dewline/dewline/ingest"
)

// Reader reads the records of one trend export, row by row. It is not safe
// for concurrent use.
type Reader struct {
	name string
	opt  Options
	sp   *splitter
	det  Detection

	dec        byte // decimal separator
	layout     Layout
	ncols      int // header fields, trailing empty ones dropped
	skip       int // records before the first data row
	timeIdx    int // time column (the clock, when dateIdx >= 0)
	dateIdx    int // date column when date and clock are apart, else -1
	form       timeForm
	yearBuf    []byte // scratch for Options.Year
	order      dateOrder
	unixDigits int

	cols                        []Column // wide: value columns
	pointIdx, valueIdx, unitIdx int      // long: role columns (unitIdx -1 when none)
	series                      map[string]*seriesInfo
	units                       map[string]string
	points                      []Column // long: points in order of first appearance
	spill                       seriesInfo

	loc  *time.Location // for wall times; nil when the file has none
	out  *time.Location // of returned times
	zone wallResolver
	fold foldState
	tbuf []byte

	// The records of the current row, built whole before Next hands them
	// out, so that Next returns one with a plain struct copy. A record
	// assembled field by field in Next cost a third more per file: the
	// caller's 16-byte loads of the returned struct then wait on Next's
	// fresh 8-byte stores.
	recs  []ingest.Record // one per value column; Series, Unit and File filled in once
	spare []ingest.Record // rows with gaps are compacted here
	ready []ingest.Record // this row's records: recs itself, or a prefix of spare
	pi    int             // next record of ready

	stats    Stats
	fast     bool // fastWide applies to the layout
	fastRows int  // rows fastWide took, for tests
	done     bool
	endErr   error
}

type seriesInfo struct {
	col  Column
	fold foldState
}

// maxInterned bounds the point and unit names a long-layout reader keeps;
// past it, names are allocated per row and repeated-hour tracking is shared.
const maxInterned = 100_000

// Detection is what NewReader found out about a file, or took from Options.
type Detection struct {
	Encoding     string // "UTF-8", "UTF-8 with byte-order mark", "UTF-16LE", "UTF-8 in gzip", ...; "; header read as ISO 8859-1" when it is not UTF-8
	Delimiter    rune
	DecimalComma bool
	Layout       Layout
	HeaderLine   int  // line of the column names; lines before it were skipped as a preamble
	UnitRow      bool // the line after the header holds units
	TimeColumn   string
	TimeFormat   string // the timestamp form, in words
	DayFirst     bool   // year-last dates only
	DateOrderBy  string // what decided DayFirst, in words ("" when the form has no such question)
	LocalTime    bool   // timestamps are wall times read in Options.Location
}

// NewReader reads the head of r (up to 128 KiB), detects the file's layout,
// delimiter, decimal separator, header, units and timestamp form, and returns
// a Reader positioned on the first data row. name is used in records and
// messages, usually the file's path.
//
// When year-last dates do not show whether the day or the month comes first
// within the head and r is an io.Seeker (an *os.File), NewReader scans the
// rest of the date column for a day above 12 and seeks back; otherwise the
// question is an error that asks for Options.DayFirst.
//
// Errors are *FileError values that wrap one of the Err... sentinels, or an
// *OptionsError.
func NewReader(src io.Reader, name string, opt Options) (*Reader, error) {
	if err := opt.validate(); err != nil {
		return nil, err
	}
	r := &Reader{name: name, opt: opt, dateIdx: -1, pointIdx: -1, valueIdx: -1, unitIdx: -1,
		loc: opt.Location, out: opt.Location}
	if r.out == nil {
		r.out = time.UTC
	}
	r.zone.loc = opt.Location

	seeker, _ := src.(io.ReadSeeker)
	var start int64
	if seeker != nil {
		var err error
		if start, err = seeker.Seek(0, io.SeekCurrent); err != nil {
			seeker = nil
		}
	}
	br, enc, direct, err := decode(src, name)
	if err != nil {
		return nil, err
	}
	if !direct {
		seeker = nil
	}
	r.det.Encoding = enc
	head, err := br.Peek(bufSize)
	atEOF := false
	switch err {
	case nil:
	case io.EOF:
		atEOF = true
	default:
		return nil, &FileError{File: name, Err: ErrRead, Cause: err, Fix: "check that the file is readable"}
	}
	if err := checkHead(head, name); err != nil {
		return nil, err
	}
	needPass, err := r.sniff(head, atEOF)
	if err != nil {
		return nil, err
	}
	if needPass {
		if seeker == nil {
			return nil, r.ambiguousDate("the first 128 KiB")
		}
		if br, err = r.orderPass(br, seeker, start); err != nil {
			return nil, err
		}
	}
	r.sp = newSplitter(br, byte(r.det.Delimiter))
	for i := 0; i < r.skip; i++ {
		if _, err := r.sp.next(); err != nil {
			return nil, &FileError{File: name, Err: ErrRead, Cause: err}
		}
	}
	r.stats.HeaderLines = r.sp.nl
	if r.skip > 0 && r.sp.noNL {
		r.stats.HeaderLines++ // the header is the last line, without a line break
	}
	r.fast = r.layout == LayoutWide && r.dateIdx < 0 && r.timeIdx == 0 && r.ncols == len(r.cols)+1
	r.sp.lazy = r.fast
	if r.layout == LayoutLong {
		r.series = make(map[string]*seriesInfo)
		r.units = make(map[string]string)
	}
	r.recs = make([]ingest.Record, max(len(r.cols), 1))
	for i := range r.recs {
		r.recs[i].File = name
		if i < len(r.cols) {
			r.recs[i].Series, r.recs[i].Unit, r.recs[i].UnitLine = r.cols[i].Name, r.cols[i].Unit, r.cols[i].UnitLine
		}
	}
	r.spare = make([]ingest.Record, len(r.recs))
	return r, nil
}

// orderPass scans the whole date column of a seekable file for a day or a
// month above 12, then rewinds.
func (r *Reader) orderPass(br *bufio.Reader, seeker io.ReadSeeker, start int64) (*bufio.Reader, error) {
	sp := newSplitter(br, byte(r.det.Delimiter))
	ev := orderEvidence{same: true}
	for i := 0; ; i++ {
		st, err := sp.next()
		if err != nil {
			return nil, &FileError{File: r.name, Err: ErrRead, Cause: err}
		}
		if st == recEOF {
			break
		}
		if i < r.skip || st != recOK {
			continue
		}
		idx := r.timeIdx
		if r.dateIdx >= 0 {
			idx = r.dateIdx
		}
		if idx < len(sp.fields) {
			ev.add(sp.fields[idx], sp.start)
		}
		if ev.dayLine > 0 || ev.monthLine > 0 {
			break
		}
	}
	if _, err := seeker.Seek(start, io.SeekStart); err != nil {
		return nil, &FileError{File: r.name, Err: ErrRead, Cause: err}
	}
	switch {
	case ev.dayLine > 0:
		r.setOrder(dayFirst, ev.byLine(dayFirst))
	case ev.monthLine > 0:
		r.setOrder(monthFirst, ev.byLine(monthFirst))
	case ev.same:
		r.setOrder(monthFirst, "day equals month in every row")
	default:
		return nil, r.ambiguousDate("the whole file")
	}
	nbr, _, _, err := decode(seeker, r.name)
	return nbr, err
}

// Next returns the next record, or io.EOF after the last one. Rejected rows
// and cells do not stop it: they are counted in Stats. Any other error is a
// *FileError for a failed read, after which Next keeps returning it.
func (r *Reader) Next() (ingest.Record, error) {
	if r.pi < len(r.ready) {
		r.pi++
		return r.ready[r.pi-1], nil
	}
	if !r.advance() {
		return ingest.Record{}, r.endErr
	}
	r.pi = 1
	return r.ready[0], nil
}

// Read fills dst with the next records and returns how many it wrote. At
// the end it returns 0 and io.EOF; a read error comes back like Next's,
// after the records before it. Read and Next may be mixed.
//
// Read is for loops over millions of records: the records go into dst whole,
// while each record Next returns is copied through the call's result, which
// on amd64 costs about as much as parsing its value.
func (r *Reader) Read(dst []ingest.Record) (int, error) {
	n := 0
	for n < len(dst) {
		if r.pi < len(r.ready) {
			k := copy(dst[n:], r.ready[r.pi:])
			r.pi += k
			n += k
			continue
		}
		if !r.advance() {
			break
		}
		r.pi = 0
	}
	if n == 0 && len(dst) > 0 {
		return 0, r.endErr
	}
	return n, nil
}

// advance reads rows until one gives records; false at the end.
func (r *Reader) advance() bool {
	for !r.done {
		r.row()
		if len(r.ready) > 0 {
			r.stats.Records += len(r.ready)
			return true
		}
	}
	return false
}

// Layout returns the layout of the file.
func (r *Reader) Layout() Layout { return r.layout }

// Detected returns what NewReader detected.
func (r *Reader) Detected() Detection { return r.det }

// Columns lists the series of the file: for the wide layout the value
// columns of the header, for the long layout the points met so far, in the
// order they first appeared.
func (r *Reader) Columns() []Column {
	if r.layout == LayoutLong {
		return append([]Column(nil), r.points...)
	}
	return append([]Column(nil), r.cols...)
}

// Stats returns the counts so far.
func (r *Reader) Stats() Stats {
	s := r.stats.clone()
	s.Records -= len(r.ready) - r.pi // read, not yet returned
	return s
}

// Name returns the name the Reader was given.
func (r *Reader) Name() string { return r.name }

// row reads one record of the file and queues its values.
func (r *Reader) row() {
	r.ready = r.ready[:0]
	r.pi = 0
	st, err := r.sp.next()
	if err == nil && r.sp.pendSp {
		if r.fastWide(r.sp.raw) {
			return
		}
		st, err = r.sp.split()
	}
	if err != nil {
		r.done = true
		r.endErr = &FileError{File: r.name, Line: r.sp.start, Err: ErrRead, Cause: err,
			Fix: "check the file or the connection it comes from"}
		return
	}
	switch st {
	case recEOF:
		r.done = true
		r.endErr = io.EOF
		return
	case recBlank:
		r.stats.Blank++
		return
	case recQuotes:
		r.stats.Rows++
		reason := ReasonQuotes
		if r.sp.noNL {
			reason = ReasonTruncated
		}
		r.reject(reason, "", nil)
		return
	case recTooLong:
		r.stats.Rows++
		r.reject(ReasonTooLong, "", nil)
		return
	case recOpenQuote:
		r.stats.Rows++
		r.reject(ReasonOpenQuote, "", nil)
		return
	}
	r.stats.Rows++
	r.stats.Continued += r.sp.lines() - 1
	f := r.sp.fields
	if len(f) != r.ncols {
		if len(f) < r.ncols {
			if r.sp.noNL {
				r.reject(ReasonTruncated, "", nil)
			} else {
				r.reject(ReasonFieldCount, "", nil)
			}
			return
		}
		for _, x := range f[r.ncols:] {
			if len(x) != 0 {
				r.reject(ReasonFieldCount, "", nil)
				return
			}
		}
	}
	tcell := f[r.timeIdx]
	if r.dateIdx >= 0 {
		r.tbuf = append(append(append(r.tbuf[:0], f[r.dateIdx]...), ' '), tcell...)
		tcell = r.tbuf
	}
	ts, ok := r.parseStamp(tcell)
	if !ok {
		r.reject(ReasonBadTime, "", tcell)
		return
	}
	if r.layout == LayoutLong {
		r.longRow(f, ts, tcell)
		return
	}
	sec, reason := r.instant(ts, &r.fold)
	if reason != "" {
		r.reject(reason, "", tcell)
		return
	}
	t := time.Unix(sec, ts.nsec).In(r.out)
	line := r.sp.start
	dec := r.dec
	for i := range r.cols {
		c := &r.cols[i]
		v, st := parseNumber(f[c.Index], dec)
		switch st {
		case numOK:
		case numMissing:
			r.stats.Missing++
			continue
		case numBool:
			r.stats.Booleans++
		default:
			r.rejectCell(st, c.Name, f[c.Index])
			continue
		}
		n := len(r.ready)
		r.ready = r.spare[:n+1]
		rec := &r.ready[n]
		rec.Series, rec.Unit, rec.UnitLine, rec.File = c.Name, c.Unit, c.UnitLine, r.name
		rec.Time, rec.Value, rec.Line = t, v, line
	}
}

func (r *Reader) parseStamp(b []byte) (stamp, bool) {
	if r.opt.Year != 0 {
		if nb, ok := addYear(b, r.opt.Year, r.yearBuf); ok {
			r.yearBuf, b = nb, nb
		}
	}
	switch r.form {
	case formISO:
		return parseISO(b)
	case formYearLast:
		return parseYearLast(b, r.order)
	case formUnix:
		return parseUnix(b, r.unixDigits)
	}
	return stamp{}, false
}

// fastWide reads a quote-free row of a wide file whose first column is the
// time and whose other columns all hold values, in one pass over the line:
// no field slices, the decimal parse of parseNumber inlined. It takes only
// the common case (every cell a plain decimal of up to 15 digits, a wall
// time away from any daylight-saving change) and otherwise returns false
// having changed nothing, for the general path to redo the row.
func (r *Reader) fastWide(line []byte) bool {
	d := r.sp.delim
	i := bytes.IndexByte(line, d)
	if i < 0 {
		return false
	}
	ts, ok := r.parseStamp(line[:i])
	if !ok {
		return false
	}
	sec := ts.sec - ts.off
	if !ts.hasOff {
		z := &r.zone
		if r.loc == nil || !z.ok || ts.sec < z.lo || ts.sec >= z.hi {
			return false
		}
		sec = ts.sec - z.off
	}
	dec := r.dec
	recs := r.recs[:len(r.cols)]
	n := len(line)
	p := i + 1
	last := len(r.cols) - 1
	for k := range recs {
		j := p
		neg := false
		if j < n && line[j] == '-' {
			neg = true
			j++
		}
		first := j
		var mant uint64
		dot := -1
		for ; j < n; j++ {
			c := line[j] - '0'
			if c <= 9 {
				mant = mant*10 + uint64(c)
				continue
			}
			if line[j] != dec || dot >= 0 {
				break
			}
			dot = j
		}
		digits := j - first
		frac := 0
		if dot >= 0 {
			digits--
			frac = j - dot - 1
		}
		if digits <= 0 || digits > 15 {
			return false
		}
		if k == last {
			if j != n {
				return false
			}
		} else if j == n || line[j] != d {
			return false
		}
		v := float64(mant)
		if frac > 0 {
			v /= pow10[frac]
		}
		if neg {
			v = -v
		}
		recs[k].Value = v
		p = j + 1
	}
	// Every cell parsed: commit the row.
	r.stats.Rows++
	r.fastRows++
	t := time.Unix(sec, ts.nsec).In(r.out)
	line0 := r.sp.start
	for k := range recs {
		recs[k].Time, recs[k].Line = t, line0
	}
	r.ready = recs
	return true
}

func (r *Reader) longRow(f [][]byte, ts stamp, tcell []byte) {
	pb := f[r.pointIdx]
	if len(pb) == 0 {
		r.reject(ReasonNoPoint, "", nil)
		return
	}
	si := r.point(pb)
	sec, reason := r.instant(ts, &si.fold)
	if reason != "" {
		r.reject(reason, "", tcell)
		return
	}
	cell := f[r.valueIdx]
	v, st := parseNumber(cell, r.dec)
	switch st {
	case numOK:
	case numMissing:
		r.stats.Missing++
		return
	case numBool:
		r.stats.Booleans++
	default:
		r.rejectCell(st, si.col.Name, cell)
		return
	}
	unit := si.col.Unit
	if r.unitIdx >= 0 {
		if ub := f[r.unitIdx]; len(ub) > 0 {
			unit = r.unit(ub)
		}
	}
	r.recs[0] = ingest.Record{Series: si.col.Name, Unit: unit, Time: time.Unix(sec, ts.nsec).In(r.out),
		Value: v, File: r.name, Line: r.sp.start}
	r.ready = r.recs[:1]
}

// point returns the interned information about a long-layout point name.
func (r *Reader) point(b []byte) *seriesInfo {
	if si, ok := r.series[string(b)]; ok {
		return si
	}
	raw := text(b)
	name, unit := splitNameUnit(raw)
	col := Column{Index: -1, Header: raw, Name: name, Unit: unit}
	if r.unitIdx >= 0 && unit == "" && len(r.sp.fields[r.unitIdx]) > 0 {
		col.Unit = text(r.sp.fields[r.unitIdx])
	}
	if len(r.series) >= maxInterned {
		r.spill.col = col
		return &r.spill
	}
	si := &seriesInfo{col: col}
	r.series[string(b)] = si
	r.points = append(r.points, col)
	return si
}

func (r *Reader) unit(b []byte) string {
	if u, ok := r.units[string(b)]; ok {
		return u
	}
	u := text(b)
	if len(r.units) < maxInterned {
		r.units[string(b)] = u
	}
	return u
}

// instant resolves a timestamp to Unix seconds, or gives the reason to
// reject its row. fold tracks the repeated hour for the row's series.
func (r *Reader) instant(ts stamp, fold *foldState) (int64, Reason) {
	if ts.hasOff {
		return ts.sec - ts.off, ""
	}
	if r.loc == nil {
		return 0, ReasonNoOffset
	}
	early, late, k := r.zone.resolve(ts.sec)
	switch k {
	case wallOne:
		return early, ""
	case wallNone:
		r.stats.DST.Skipped++
		return 0, ReasonDSTGap
	}
	r.stats.DST.Repeated++
	if fold.pick(ts.sec, transitionAfter(r.loc, early)) {
		r.stats.DST.RepeatedLater++
		return late, ""
	}
	r.stats.DST.RepeatedEarlier++
	return early, ""
}

func (r *Reader) rejectCell(st numStatus, col string, cell []byte) {
	reason := ReasonNotNumeric
	switch st {
	case numDecSep:
		reason = ReasonDecimalSep
	case numNotFinite:
		reason = ReasonNotFinite
	}
	r.reject(reason, col, cell)
}

// maxExampleText bounds the text kept with an example rejection.
const maxExampleText = 80

func (r *Reader) reject(reason Reason, col string, b []byte) {
	if r.stats.Rejected == nil {
		r.stats.Rejected = make(map[Reason]int)
	}
	r.stats.Rejected[reason]++
	if col == "" {
		r.stats.RowsRejected++
	}
	if len(r.stats.Examples) >= MaxExamples {
		return
	}
	if b == nil {
		b = r.sp.raw
		if b == nil {
			for i, f := range r.sp.fields {
				if i > 0 {
					b = append(b, byte(r.det.Delimiter))
				}
				b = append(b, f...)
				if len(b) > maxExampleText {
					break
				}
			}
		}
	}
	if len(b) > maxExampleText {
		b = b[:maxExampleText]
	}
	r.stats.Examples = append(r.stats.Examples, Rejection{File: r.name, Line: r.sp.start, Column: col,
		Reason: reason, Text: text(b)})
}
