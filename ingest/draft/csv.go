package draft

import (
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// Read is what reading the sources found besides the points.
type Read struct {
	// DayFirst and DecimalComma are "yes" or "no" when a CSV file needed
	// the choice made (dates such as 04/07/2026, decimal commas), so that
	// the configuration reads the exports the same way.
	DayFirst, DecimalComma string
	Rows                   int
	Rejected               int
	// NoRows lists the exports without a data row (only a header, and
	// perhaps a unit row).
	NoRows []string
}

// ReadCSV reads CSV trend exports into points: one per column of a wide
// file or per point name of a long one, with the unit the file declares and
// the statistics of its values. The same series in several files is one
// point.
func ReadCSV(paths []string, opt csvfile.Options) ([]Point, Read, error) {
	var rd Read
	idx := map[string]int{}
	var points []Point
	for _, path := range paths {
		f, err := os.Open(path)
		if err != nil {
			return nil, rd, fmt.Errorf("open export: %w", err)
		}
		r, err := csvfile.NewReader(f, path, opt)
		if err != nil {
			_ = f.Close()
			return nil, rd, err
		}
		det := r.Detected()
		if det.DateOrderBy != "" {
			rd.DayFirst = yesNo(det.DayFirst)
		}
		if det.DecimalComma {
			rd.DecimalComma = "yes"
		}
		long := r.Layout() == csvfile.LayoutLong
		for {
			rec, err := r.Next()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				_ = f.Close()
				return nil, rd, fmt.Errorf("read %s: %w", path, err)
			}
			rd.Rows++
			i, ok := idx[rec.Series]
			if !ok {
				p := Point{Name: rec.Series, Unit: rec.Unit}
				if long {
					p.Ref.Point = rec.Series
				} else {
					p.Ref.Column = rec.Series
				}
				i = len(points)
				idx[rec.Series] = i
				points = append(points, p)
			}
			if points[i].Unit == "" {
				points[i].Unit = rec.Unit
			}
			points[i].Stats.Add(rec.Time, rec.Value)
		}
		// Columns of a wide file that hold no value at all are points too:
		// the draft lists them rather than letting them vanish, and maps
		// them by name when the file has no data row at all.
		noRows := ""
		if r.Stats().Rows == 0 {
			noRows = path
			rd.NoRows = append(rd.NoRows, path)
		}
		for _, col := range r.Columns() {
			if _, ok := idx[col.Name]; !ok && !long {
				idx[col.Name] = len(points)
				points = append(points, Point{Name: col.Name, Unit: col.Unit, Ref: metrics.PointRef{Column: col.Name}, NoRowsIn: noRows})
			}
		}
		rd.Rejected += r.Stats().RejectedTotal()
		if err := f.Close(); err != nil {
			return nil, rd, fmt.Errorf("close %s: %w", path, err)
		}
	}
	return points, rd, nil
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}
