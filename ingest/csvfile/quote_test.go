package csvfile

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// physicalLines counts the lines of b as the reader does: a line ends at
// LF; a last line without one still counts.
func physicalLines(b []byte) int {
	n := strings.Count(string(b), "\n")
	if len(b) > 0 && b[len(b)-1] != '\n' {
		n++
	}
	return n
}

// TestReader_StrayQuote: one unbalanced quote in a 40,000-row export
// costs its own row, named by line, and no other: the reader resumes on
// the next line. Every physical line is a header, blank, kept or rejected
// row.
func TestReader_StrayQuote(t *testing.T) {
	tests := []struct {
		name   string
		bad    string // the row at line 1002 (data row 1,001)
		reason Reason
	}{
		{"opening quote never closed", "2026-07-14T16:40:00Z,\"55.1,1200", ReasonOpenQuote},
		{"quote opens a value", "2026-07-14T16:40:00Z,55.1,\"1200", ReasonOpenQuote},
		{"text after a closing quote", "2026-07-14T16:40:00Z,\"55\"1,1200", ReasonQuotes},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var b strings.Builder
			b.WriteString("Time,SAT,Flow\n")
			start := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
			for i := 0; i < 40_000; i++ {
				if i == 1000 {
					b.WriteString(tt.bad + "\n")
					continue
				}
				fmt.Fprintf(&b, "%s,55.1,1200\n", start.Add(time.Duration(i)*time.Minute).Format(time.RFC3339))
			}
			in := b.String()
			r, err := newString(t, in, Options{})
			require.NoError(t, err)
			recs := readAll(t, r)
			s := r.Stats()
			assert.Equal(t, 2*39_999, len(recs), "every row but the bad one")
			assert.Equal(t, 40_000, s.Rows)
			assert.Equal(t, 1, s.RowsRejected)
			assert.Equal(t, map[Reason]int{tt.reason: 1}, s.Rejected)
			require.Len(t, s.Examples, 1)
			assert.Equal(t, 1002, s.Examples[0].Line)
			assert.Equal(t, physicalLines([]byte(in)), s.HeaderLines+s.Blank+s.Rows+s.Continued)
			assert.Equal(t, 1003, recs[2*1000].Line, "the row after the bad one is read at its own line")
		})
	}
}

// TestReader_QuotedLineBreakLimit: a quoted field may hold line breaks
// up to maxRecordLines lines; a longer one is taken for a stray quote and
// reading resumes on the line after its first.
func TestReader_QuotedLineBreakLimit(t *testing.T) {
	body := func(breaks int) string {
		var b strings.Builder
		b.WriteString("Time,SAT,Note\n")
		b.WriteString("2026-07-14T13:00:00Z,55.1,\"first")
		for i := 0; i < breaks; i++ {
			b.WriteString("\nmore")
		}
		b.WriteString("\"\n")
		for m := 1; m <= 40; m++ {
			fmt.Fprintf(&b, "2026-07-14T13:%02d:00Z,55.2,ok\n", m)
		}
		return b.String()
	}
	t.Run("within the limit", func(t *testing.T) {
		in := body(maxRecordLines - 1)
		r, err := newString(t, in, Options{Layout: LayoutWide, Delimiter: ','})
		require.NoError(t, err)
		recs := readAll(t, r)
		s := r.Stats()
		assert.Equal(t, 0, s.RowsRejected)
		assert.Equal(t, maxRecordLines-1, s.Continued)
		require.Len(t, recs, 41)
		assert.Equal(t, 55.1, recs[0].Value)
		assert.Equal(t, physicalLines([]byte(in)), s.HeaderLines+s.Blank+s.Rows+s.Continued)
	})
	t.Run("past the limit", func(t *testing.T) {
		in := body(maxRecordLines + 5)
		r, err := newString(t, in, Options{Layout: LayoutWide, Delimiter: ','})
		require.NoError(t, err)
		recs := readAll(t, r)
		s := r.Stats()
		require.NotEmpty(t, s.Examples)
		assert.Equal(t, Rejection{File: "test.csv", Line: 2, Reason: ReasonOpenQuote, Text: "2026-07-14T13:00:00Z,55.1,\"first\n"}, s.Examples[0])
		// The continuation lines come back as rows of their own (rejected
		// for their field count), the last good row is read.
		assert.Equal(t, maxRecordLines+5+1+40, s.Rows)
		assert.Equal(t, maxRecordLines+5+1, s.RowsRejected)
		require.Len(t, recs, 40)
		assert.Equal(t, 55.2, recs[0].Value)
		assert.Equal(t, maxRecordLines+5+3, recs[0].Line)
		assert.Equal(t, physicalLines([]byte(in)), s.HeaderLines+s.Blank+s.Rows+s.Continued)
	})
}

// TestNewReader_FirstRowPastHead: a first data row that does not end in
// the 128 KiB head cannot be detected; NewReader says so, naming its line,
// instead of rejecting every row as an unparseable time.
func TestNewReader_FirstRowPastHead(t *testing.T) {
	const n = 20_000 // 20,000 columns: a 129 KB header, 100 KB rows
	var b strings.Builder
	b.WriteString("Time")
	for i := range n {
		fmt.Fprintf(&b, ",P%d", i)
	}
	b.WriteString("\n")
	for m := range 3 {
		fmt.Fprintf(&b, "2026-07-14T00:%02d:00Z", m)
		for range n {
			b.WriteString(",21.5")
		}
		b.WriteString("\n")
	}
	require.Less(t, strings.Index(b.String(), "\n"), 128<<10, "the header fits the head")
	_, err := newString(t, b.String(), Options{})
	require.ErrorIs(t, err, ErrRowTooLong)
	assert.Contains(t, err.Error(), "test.csv line 2: data row too long to detect the format")
	assert.Contains(t, err.Error(), "export fewer points per file")
}

// TestReader_OpenQuoteOnLastLine: a quote opened on the last line, which
// ends with its line break, rejects that line alone.
func TestReader_OpenQuoteOnLastLine(t *testing.T) {
	in := "Time,SAT,Flow\n2026-07-14T13:00:00Z,55.1,1200\n2026-07-14T13:01:00Z,55.2,\"1210\n"
	r, err := newString(t, in, Options{})
	require.NoError(t, err)
	recs := readAll(t, r)
	s := r.Stats()
	assert.Len(t, recs, 2)
	assert.Equal(t, map[Reason]int{ReasonOpenQuote: 1}, s.Rejected)
	require.Len(t, s.Examples, 1)
	assert.Equal(t, 3, s.Examples[0].Line)
	assert.Equal(t, 3, s.HeaderLines+s.Blank+s.Rows+s.Continued)
}
