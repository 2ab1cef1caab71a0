package csvfile

import (
	"bufio"
	"bytes"
	"fmt"
	"strings"
	"unicode/utf8"
)

// headRec is one record of the head, with its fields copied.
type headRec struct {
	line   int
	st     recStatus
	fields [][]byte
}

// maxHeadRecords bounds the records of the head that detection looks at.
const maxHeadRecords = 500

// maxTimeSearch bounds the columns searched for timestamps when no header
// names the time column.
const maxTimeSearch = 32

func splitHead(head []byte, delim byte, limit int) []headRec {
	sp := newSplitter(bufio.NewReaderSize(bytes.NewReader(head), 4096), delim)
	var out []headRec
	for len(out) < limit {
		st, err := sp.next()
		if err != nil || st == recEOF {
			break
		}
		rec := headRec{line: sp.start, st: st}
		if st == recOK {
			// One copy per record: the fields point into the read buffer.
			n := 0
			for _, f := range sp.fields {
				n += len(f)
			}
			buf := make([]byte, 0, n)
			rec.fields = make([][]byte, len(sp.fields))
			for i, f := range sp.fields {
				buf = append(buf, f...)
				rec.fields[i] = buf[len(buf)-len(f) : len(buf) : len(buf)]
			}
		}
		out = append(out, rec)
	}
	return out
}

// effective is the field count without trailing empty fields.
func effective(f [][]byte) int {
	n := len(f)
	for n > 0 && len(f[n-1]) == 0 {
		n--
	}
	return n
}

// chooseDelim picks the candidate that splits the most lines of the head
// into the same number (at least two) of fields. On a tie the earlier
// candidate wins: a semicolon or tab file may hold decimal commas, a comma
// file rarely holds semicolons, tabs or pipes.
func chooseDelim(head []byte) byte {
	var best byte
	bestScore := 0.0
	for _, d := range []byte{';', '\t', '|', ','} {
		recs := splitHead(head, d, 50)
		count := map[int]int{}
		n := 0
		for _, rec := range recs {
			if rec.st == recOK {
				count[len(rec.fields)]++
				n++
			}
		}
		mode, modeN := 0, 0
		for c, k := range count {
			if k > modeN || (k == modeN && c > mode) {
				mode, modeN = c, k
			}
		}
		if mode < 2 || n == 0 {
			continue
		}
		if score := float64(modeN) / float64(n); score > bestScore+1e-9 {
			best, bestScore = d, score
		}
	}
	return best
}

// cellAt is a cell of the head with its line.
type cellAt struct {
	line int
	b    []byte
}

// orderEvidence collects what year-last dates say about the day/month order.
type orderEvidence struct {
	dayLine, monthLine int // first line with a first (day) or second (month) number above 12
	dayText, monthText string
	dotted             bool // every date separated by dots
	same               bool // first and second number equal in every date
	n                  int
}

func (e *orderEvidence) add(b []byte, line int) {
	p, _, ok := scanYearLast(b)
	if !ok {
		return
	}
	if e.n == 0 {
		e.dotted = true
	}
	e.n++
	e.dotted = e.dotted && p.sep == '.'
	e.same = e.same && p.a == p.b
	if p.a > 12 && p.a <= 31 && p.b <= 12 && e.dayLine == 0 {
		e.dayLine, e.dayText = line, string(b)
	}
	if p.b > 12 && p.b <= 31 && p.a <= 12 && e.monthLine == 0 {
		e.monthLine, e.monthText = line, string(b)
	}
}

func (e *orderEvidence) byLine(o dateOrder) string {
	if o == dayFirst {
		return fmt.Sprintf("line %d (%q) has a day above 12 first", e.dayLine, e.dayText)
	}
	return fmt.Sprintf("line %d (%q) has a day above 12 second", e.monthLine, e.monthText)
}

// timeGuess is the timestamp form found in a column of the head.
type timeGuess struct {
	form       timeForm
	n, ok      int // non-empty cells, cells of form that parse
	digits     int
	local, off int // parsed cells without and with a written offset
	firstBad   string
	ev         orderEvidence
}

func detectTime(cells []cellAt) timeGuess {
	var g timeGuess
	var iso, yl int
	ux := map[int]int{}
	for _, c := range cells {
		if len(c.b) == 0 {
			continue
		}
		g.n++
		if _, ok := parseISO(c.b); ok {
			iso++
		}
		if _, ok := parseYearLast(c.b, monthFirst); ok {
			yl++
		} else if _, ok := parseYearLast(c.b, dayFirst); ok {
			yl++
		}
		if d := unixDigits(c.b); d > 0 {
			if _, ok := parseUnix(c.b, d); ok {
				ux[d]++
			}
		}
	}
	uxBest := 0
	for d, k := range ux {
		if k > ux[g.digits] || (k == ux[g.digits] && d < g.digits) {
			g.digits = d
		}
		uxBest = max(uxBest, k)
	}
	switch {
	case iso == 0 && yl == 0 && uxBest == 0:
		g.form = formNone
	case iso >= yl && iso >= uxBest:
		g.form, g.ok = formISO, iso
	case yl >= uxBest:
		g.form, g.ok = formYearLast, yl
	default:
		g.form, g.ok = formUnix, uxBest
	}
	g.ev.same = true
	for _, c := range cells {
		if len(c.b) == 0 {
			continue
		}
		var st stamp
		ok := false
		switch g.form {
		case formISO:
			st, ok = parseISO(c.b)
		case formYearLast:
			g.ev.add(c.b, c.line)
			if st, ok = parseYearLast(c.b, monthFirst); !ok {
				st, ok = parseYearLast(c.b, dayFirst)
			}
		case formUnix:
			st, ok = parseUnix(c.b, g.digits)
		}
		switch {
		case !ok:
			if g.firstBad == "" {
				g.firstBad = string(c.b)
			}
		case st.hasOff:
			g.off++
		default:
			g.local++
		}
	}
	return g
}

// good reports whether a column's cells are mostly timestamps.
func (g timeGuess) good() bool { return g.form != formNone && g.ok*2 >= g.n }

// sniff detects everything from the head. needPass asks for a scan of the
// whole file for the date order.
func (r *Reader) sniff(head []byte, atEOF bool) (needPass bool, err error) {
	if !atEOF {
		head = head[:bytes.LastIndexByte(head, '\n')+1]
	}
	fe := func(sentinel error, line int, detail, fix string) error {
		return &FileError{File: r.name, Line: line, Err: sentinel, Detail: detail, Fix: fix}
	}

	// Delimiter.
	delim := byte(r.opt.Delimiter)
	if delim == 0 {
		if delim = chooseDelim(head); delim == 0 {
			return false, fe(ErrNoDelimiter, 0,
				"no comma, semicolon, tab or pipe splits the first lines into the same number of fields",
				"check that this is a trend export, or set "+r.opt.setting("Delimiter"))
		}
	}
	r.det.Delimiter = rune(delim)
	recs := splitHead(head, delim, maxHeadRecords)

	// Header: the first record with as many fields as most records have
	// (trailing empty fields aside); records before it are a preamble.
	count := map[int]int{}
	for _, rec := range recs {
		if rec.st == recOK {
			count[effective(rec.fields)]++
		}
	}
	mode, modeN := 0, 0
	for c, k := range count {
		if k > modeN || (k == modeN && c > mode) {
			mode, modeN = c, k
		}
	}
	h := -1
	for i, rec := range recs {
		if rec.st == recOK && effective(rec.fields) >= max(mode, 2) {
			h = i
			break
		}
	}
	if h < 0 {
		return false, fe(ErrHeader, 0, "no line with two or more column names",
			"the file needs a header line naming its columns")
	}
	hdr := recs[h]
	r.det.HeaderLine = hdr.line
	r.skip = h + 1
	r.ncols = effective(hdr.fields)
	headers := make([]string, r.ncols)
	latin := false
	for i := range headers {
		headers[i] = text(hdr.fields[i])
		latin = latin || !utf8.Valid(hdr.fields[i])
	}
	if latin {
		r.det.Encoding += "; header read as ISO 8859-1"
	}
	data := recs[h+1:]

	// Layout by the header names.
	r.pointIdx = findRole(headers, pointNames)
	r.valueIdx = findRole(headers, valueNames)
	r.unitIdx = findRole(headers, unitNames)
	switch r.opt.Layout {
	case LayoutLong:
		if r.pointIdx < 0 || r.valueIdx < 0 {
			return false, fe(ErrHeader, hdr.line, fmt.Sprintf("long layout needs a point and a value column; header is %q", headers),
				"name them e.g. \"Point\" and \"Value\", or use LayoutWide")
		}
		r.layout = LayoutLong
	case LayoutWide:
		r.layout = LayoutWide
	default:
		r.layout = LayoutWide
		if r.pointIdx >= 0 && r.valueIdx >= 0 {
			r.layout = LayoutLong
		}
	}
	if r.layout == LayoutWide {
		r.pointIdx, r.valueIdx, r.unitIdx = -1, -1, -1
	}
	r.det.Layout = r.layout

	// A unit row under a wide header: no timestamps, no numbers, and at
	// least one unit psychro knows.
	var unitRow []string
	unitRowLine := 0
	if r.layout == LayoutWide && len(data) > 0 && data[0].st == recOK && isUnitRow(data[0].fields) {
		unitRowLine = data[0].line
		for _, f := range data[0].fields {
			unitRow = append(unitRow, text(f))
		}
		r.det.UnitRow = true
		r.skip++
		data = data[1:]
	}

	column := func(i int) []cellAt {
		var cells []cellAt
		for _, rec := range data {
			if rec.st == recOK && i < len(rec.fields) {
				b := rec.fields[i]
				if r.opt.Year != 0 {
					if nb, ok := addYear(b, r.opt.Year, nil); ok {
						b = nb
					}
				}
				cells = append(cells, cellAt{rec.line, b})
			}
		}
		return cells
	}

	// Time column: by option, by name, by content; date and clock may sit
	// in two columns named "Date" and "Time".
	var g timeGuess
	r.timeIdx = -1
	switch {
	case r.opt.TimeColumn != "":
		for i, hd := range headers {
			n, _ := splitNameUnit(hd)
			if strings.EqualFold(strings.TrimSpace(hd), strings.TrimSpace(r.opt.TimeColumn)) ||
				strings.EqualFold(n, strings.TrimSpace(r.opt.TimeColumn)) {
				r.timeIdx = i
				break
			}
		}
		if r.timeIdx < 0 {
			return false, fe(ErrNoTimeColumn, hdr.line, fmt.Sprintf("no column named %q in %q", r.opt.TimeColumn, headers),
				"set "+r.opt.setting("TimeColumn")+" to one of the header names")
		}
	default:
		r.timeIdx = findRole(headers, timeNames)
	}
	if r.timeIdx >= 0 {
		g = detectTime(column(r.timeIdx))
		if !g.good() && r.opt.TimeColumn == "" {
			di, ti := -1, -1
			for i, hd := range headers {
				switch normName(hd) {
				case "date":
					di = i
				case "time":
					ti = i
				}
			}
			if di >= 0 && ti >= 0 && di != ti {
				dc, tc := column(di), column(ti)
				var cells []cellAt
				for k := range min(len(dc), len(tc)) {
					cells = append(cells, cellAt{dc[k].line, append(append(bytes.Clone(dc[k].b), ' '), tc[k].b...)})
				}
				if g2 := detectTime(cells); g2.good() {
					g, r.dateIdx, r.timeIdx = g2, di, ti
				}
			}
		}
	} else {
		for i := range min(len(headers), maxTimeSearch) {
			if i == r.pointIdx || i == r.valueIdx || i == r.unitIdx {
				continue
			}
			if gi := detectTime(column(i)); gi.good() {
				g, r.timeIdx = gi, i
				break
			}
		}
		if r.timeIdx < 0 {
			return false, fe(ErrNoTimeColumn, hdr.line, fmt.Sprintf("no column of %q is named like a time column or holds timestamps", headers),
				"set "+r.opt.setting("TimeColumn"))
		}
	}
	r.det.TimeColumn = headers[r.timeIdx]
	if r.dateIdx >= 0 {
		r.det.TimeColumn = headers[r.dateIdx] + " + " + headers[r.timeIdx]
	}
	if g.n > 0 && !g.good() {
		return false, fe(ErrTimeFormat, hdr.line, fmt.Sprintf("column %q holds values like %q", r.det.TimeColumn, g.firstBad),
			"write times as 2026-07-14 13:05:00, 2026-07-14T13:05:00-04:00, 07/14/2026 1:05 PM, 14.07.2026 13:05 or Unix seconds/milliseconds, or set "+r.opt.setting("TimeColumn"))
	}
	if r.layout == LayoutLong && (r.timeIdx == r.pointIdx || r.timeIdx == r.valueIdx) {
		return false, fe(ErrHeader, hdr.line, "the time column is also the point or value column", "rename the columns")
	}
	r.form = g.form
	if g.n == 0 && hasData(data) {
		return false, fe(ErrTimeFormat, hdr.line, fmt.Sprintf("column %q is empty in the first rows", r.det.TimeColumn),
			"check the time column, or set "+r.opt.setting("TimeColumn"))
	}
	if g.n == 0 && !atEOF && !hasData(data) {
		// The file goes on, but no data row ends within the head: the
		// timestamps cannot be detected, and every row would be rejected.
		return false, fe(ErrRowTooLong, hdr.line+1, fmt.Sprintf("no data row ends within the first %d KiB after the header", bufSize>>10),
			"detection needs one whole data row in the first 128 KiB: export fewer points per file, or check that rows end with line breaks")
	}
	if g.n == 0 {
		// A header and no data in the head: nothing to read, and nothing
		// to detect the form from. Rows that turn up anyway are rejected.
		r.form = formNone
		r.det.TimeFormat = "unknown (no data rows)"
	}

	// Date order.
	if r.form == formYearLast {
		switch {
		case r.opt.DayFirst == Yes:
			r.setOrder(dayFirst, r.opt.setting("DayFirst"))
		case r.opt.DayFirst == No:
			r.setOrder(monthFirst, r.opt.setting("DayFirst"))
		case g.ev.dayLine > 0 && g.ev.monthLine > 0:
			return false, fe(ErrAmbiguousDate, g.ev.dayLine, fmt.Sprintf("%s, but %s", g.ev.byLine(dayFirst), g.ev.byLine(monthFirst)),
				"the dates contradict each other; set "+r.opt.setting("DayFirst")+" and check the rows it rejects")
		case g.ev.dayLine > 0:
			r.setOrder(dayFirst, g.ev.byLine(dayFirst))
		case g.ev.monthLine > 0:
			r.setOrder(monthFirst, g.ev.byLine(monthFirst))
		case g.ev.dotted:
			r.setOrder(dayFirst, "dates written with dots are day-first")
		case g.ev.same && atEOF:
			r.setOrder(monthFirst, "day equals month in every row")
		default:
			needPass = true
		}
	}

	// Wall times need a location.
	if g.local > 0 {
		r.det.LocalTime = true
		if r.opt.Location == nil {
			return false, fe(ErrNeedLocation, hdr.line, fmt.Sprintf("column %q holds wall-clock times like %q", r.det.TimeColumn, firstCell(column(r.timeIdx))),
				"set "+r.opt.setting("Location")+" to the zone of the building (e.g. America/New_York), or UTC if the export is in UTC")
		}
	}
	if g.form == formUnix {
		r.unixDigits = g.digits
	}
	r.describeTime()

	// Decimal separator, from the value cells.
	var valCells [][]byte
	for _, rec := range data {
		if rec.st != recOK {
			continue
		}
		for i, f := range rec.fields {
			if i >= r.ncols || i == r.timeIdx || i == r.dateIdx || i == r.pointIdx || i == r.unitIdx {
				continue
			}
			if r.layout == LayoutLong && i != r.valueIdx {
				continue
			}
			valCells = append(valCells, f)
		}
	}
	switch r.opt.DecimalComma {
	case Yes:
		r.dec = ','
	case No:
		r.dec = '.'
	default:
		if r.dec, err = chooseDecimal(valCells, delim); err != nil {
			return false, fe(ErrAmbiguousDecimal, 0, err.Error(), "set "+r.opt.setting("DecimalComma")+" (yes or no)")
		}
	}
	r.det.DecimalComma = r.dec == ','

	if r.layout == LayoutLong {
		return needPass, nil
	}

	// Wide value columns.
	seen := map[string]int{}
	for i, hd := range headers {
		if i == r.timeIdx || i == r.dateIdx {
			continue
		}
		name, unit := splitNameUnit(hd)
		unitLine := hdr.line
		if name == "" {
			return false, fe(ErrHeader, hdr.line, fmt.Sprintf("column %d has no name", i+1),
				"name every column, or remove the empty one")
		}
		if i < len(unitRow) && unitRow[i] != "" {
			if unit != "" && !sameUnit(unit, unitRow[i]) {
				return false, fe(ErrHeader, hdr.line, fmt.Sprintf("column %q states unit %q in its name and %q in the unit row", hd, unit, unitRow[i]),
					"correct one of them")
			}
			unit, unitLine = unitRow[i], unitRowLine
		}
		if j, dup := seen[name]; dup {
			return false, fe(ErrHeader, hdr.line, fmt.Sprintf("columns %d and %d are both named %q", j+1, i+1, name),
				"rename one of them; records could not be told apart")
		}
		seen[name] = i
		if unit == "" {
			unitLine = 0
		}
		r.cols = append(r.cols, Column{Index: i, Header: hd, Name: name, Unit: unit, UnitLine: unitLine})
	}
	if len(r.cols) == 0 {
		return false, fe(ErrHeader, hdr.line, "no value columns besides the time", "check the delimiter ("+r.opt.setting("Delimiter")+")")
	}
	return needPass, nil
}

func hasData(recs []headRec) bool {
	for _, rec := range recs {
		if rec.st == recOK {
			return true
		}
	}
	return false
}

func firstCell(cells []cellAt) string {
	for _, c := range cells {
		if len(c.b) > 0 {
			return string(c.b)
		}
	}
	return ""
}

// isUnitRow reports whether the fields of the line under the header are
// units: no timestamps, no numbers, at least one unit psychro knows.
func isUnitRow(f [][]byte) bool {
	known := 0
	for _, b := range f {
		if len(b) == 0 {
			continue
		}
		if _, ok := parseISO(b); ok {
			return false
		}
		if _, _, ok := scanYearLast(b); ok {
			return false
		}
		if unixDigits(b) > 0 {
			return false
		}
		if _, st := parseNumber(b, '.'); st == numOK {
			return false
		}
		if _, st := parseNumber(b, ','); st == numOK {
			return false
		}
		if _, ok := knownUnit(text(b)); ok {
			known++
		}
	}
	return known > 0
}

// chooseDecimal decides the decimal separator from the value cells of the
// head. A cell like "21,5" can only be a decimal; "12,000" could be a
// decimal or a thousands separator, and decides nothing alone. When cells of
// both kinds occur, one separator must hold nine in ten of the cells that
// can only be decimals; the cells with the other one are then rejected row by
// row, as a stray "48,9" in a comma file is.
func chooseDecimal(cells [][]byte, delim byte) (byte, error) {
	var strong, weak [2]int // [0] '.', [1] ','
	var example [2]string
	for _, c := range cells {
		for k, sep := range []byte{'.', ','} {
			switch sepEvidence(c, sep) {
			case 2:
				strong[k]++
				if example[k] == "" {
					example[k] = string(c)
				}
			case 1:
				weak[k]++
				if example[k] == "" {
					example[k] = string(c)
				}
			}
		}
	}
	switch {
	case strong[0] > 0 && strong[1] > 0:
		if strong[0] >= 9*strong[1] {
			return '.', nil
		}
		if strong[1] >= 9*strong[0] {
			return ',', nil
		}
		return 0, fmt.Errorf("values like %q (%d cells) and %q (%d cells) use different separators",
			example[0], strong[0], example[1], strong[1])
	case strong[1] > 0:
		return ',', nil
	case strong[0] > 0:
		return '.', nil
	case weak[1] > 0:
		return 0, fmt.Errorf("values like %q may be decimals or thousands", example[1])
	case weak[0] > 0 && delim != ',':
		return 0, fmt.Errorf("values like %q may be decimals or thousands", example[0])
	}
	return '.', nil
}

func (r *Reader) setOrder(o dateOrder, why string) {
	r.order = o
	r.det.DayFirst = o == dayFirst
	r.det.DateOrderBy = why
	r.describeTime()
}

func (r *Reader) describeTime() {
	var s string
	switch r.form {
	case formISO:
		s = "ISO 8601 (2006-01-02T15:04:05)"
	case formYearLast:
		if r.order == dayFirst {
			s = "day, month, year (02/01/2006 15:04)"
		} else {
			s = "month, day, year (01/02/2006 3:04 PM)"
		}
	case formUnix:
		s = map[int]string{10: "Unix seconds", 13: "Unix milliseconds", 16: "Unix microseconds", 19: "Unix nanoseconds"}[r.unixDigits]
	default:
		return
	}
	if r.form != formUnix {
		if r.det.LocalTime && r.opt.Location != nil {
			s += ", wall time in " + r.opt.Location.String()
		} else {
			s += ", with UTC offset"
		}
	}
	r.det.TimeFormat = s
}

func (r *Reader) ambiguousDate(scope string) error {
	return &FileError{File: r.name, Line: r.det.HeaderLine, Err: ErrAmbiguousDate,
		Detail: fmt.Sprintf("no date in %s of column %q has a day above 12", scope, r.det.TimeColumn),
		Fix:    "set " + r.opt.setting("DayFirst") + " (yes for 14/07/2026, no for 07/14/2026)"}
}
