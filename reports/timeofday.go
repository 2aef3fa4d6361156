package reports

import (
	"fmt"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/profile"
)

// SheetTimeOfDay shows when in the day and week each group moves, where the windows have times.
const SheetTimeOfDay = "Time of day"

// clockText says whose wall clock the hours are read on.
func clockText(r *Result) string {
	if r.TimeZone != "" {
		return "on the wall clock of " + r.TimeZone + " (days on which daylight saving time begins or ends keep their 23 or 25 hours)"
	}
	return "on the clock the times were written in (in UTC for times given with an offset; --time-zone names the study's zone)"
}

// timeOfDaySheet writes each group's 24-hour profile (the share of its windows in each state by
// hour of the day) as a table with a stacked column chart beside it, then each group's shares
// on weekdays and at weekends, and in each part of the day. It is left out without times.
func timeOfDaySheet(f *excelize.File, st *styles, r *Result) error {
	if r.TimeOfDay == nil {
		return nil
	}
	name := SheetTimeOfDay
	if _, err := f.NewSheet(name); err != nil {
		return err
	}
	k := r.States.K
	for c, wd := range append([]float64{24}, repeat(14, k+1)...) {
		col, _ := excelize.ColumnNumberToName(c + 1)
		if err := f.SetColWidth(name, col, col, wd); err != nil {
			return err
		}
	}
	w := &cellWriter{f: f, sheet: name}
	w.text(1, 1, "When in the day each group moves", st.title)
	w.text(1, 2, "The share of each group's windows in each movement state, by hour of the day "+clockText(r)+
		", and on weekdays and at weekends. Groups describe movement statistically, not diagnoses.", st.note)
	w.merge(2)
	row, err := hourCharts(f, st, r, w, 4)
	if err != nil {
		return err
	}
	row = weekdaysWeekends(st, r, w, row)
	dayParts(st, r, w, row)
	return w.err
}

// hourCharts is each group's day hour by hour: a table of the shares of each state and a
// stacked chart beside it; it returns the row after the last.
func hourCharts(f *excelize.File, st *styles, r *Result, w *cellWriter, row int) (int, error) {
	name, k := SheetTimeOfDay, r.States.K
	for c, g := range r.TimeOfDay {
		top := row
		w.stateHeads(st, row, "Hour from ("+r.GroupNames[c]+")", k, r)
		for h := 0; h < 24; h++ {
			w.text(1, row+1+h, fmt.Sprintf("%02d", h), st.text)
			for s := 0; g.ByHour[h] != nil && s < k; s++ {
				w.num(2+s, row+1+h, g.ByHour[h][s], st.pct)
			}
			w.set(2+k, row+1+h, g.Hours[h], st.integer)
		}
		var series []excelize.ChartSeries
		for s := 0; s < k; s++ {
			series = append(series, excelize.ChartSeries{
				Name: ref(name, 2+s, top, 2+s, top), Categories: ref(name, 1, top+1, 1, top+24), Values: ref(name, 2+s, top+1, 2+s, top+24),
				Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{colour(s)}},
			})
		}
		ch := chart(excelize.ColPercentStacked, fmt.Sprintf("%s: the day hour by hour", r.GroupNames[c]), series, "hour of the day (from)", "share of windows")
		ch.Dimension.Height = 420
		col, _ := excelize.ColumnNumberToName(k + 4)
		if err := f.AddChart(name, fmt.Sprintf("%s%d", col, top), ch); err != nil {
			return 0, err
		}
		row += 27
	}
	return row, nil
}

// weekdaysWeekends is each group's shares on weekdays and at weekends, on a page of its own; it
// returns the row after the last.
func weekdaysWeekends(st *styles, r *Result, w *cellWriter, row int) int {
	k := r.States.K
	w.pageBreak(row)
	w.stateHeads(st, row, "Group, days", k, r)
	row++
	for c, g := range r.TimeOfDay {
		for _, d := range []struct {
			label  string
			shares []float64
			n      int
		}{{"weekdays", g.Weekday, g.WeekdayWindows}, {"weekends", g.Weekend, g.WeekendWindows}} {
			w.text(1, row, r.GroupNames[c]+", "+d.label, st.text)
			for s := 0; d.shares != nil && s < k; s++ {
				w.num(2+s, row, d.shares[s], st.pct)
			}
			w.set(2+k, row, d.n, st.integer)
			row++
		}
	}
	return row
}

// dayParts is each group's shares in each part of the day, from its hours.
func dayParts(st *styles, r *Result, w *cellWriter, row int) {
	k := r.States.K
	parts := r.DayParts
	if parts == nil {
		parts = profile.DefaultDayParts
	}
	row++
	head := "Group, part of the day"
	if r.Signature == "day-parts" {
		head += " (the groups were found on these)"
	}
	w.stateHeads(st, row, head, k, r)
	row++
	for c, g := range r.TimeOfDay {
		for p := range parts {
			counts := make([]float64, k)
			total := 0
			for h := 0; h < 24; h++ {
				if parts.Part(h) != p || g.ByHour[h] == nil {
					continue
				}
				for s := 0; s < k; s++ {
					counts[s] += g.ByHour[h][s] * float64(g.Hours[h])
				}
				total += g.Hours[h]
			}
			w.text(1, row, fmt.Sprintf("%s, %s (from %02d:00)", r.GroupNames[c], parts.Name(p), parts[p]), st.text)
			for s := 0; total > 0 && s < k; s++ {
				w.num(2+s, row, counts[s]/float64(total), st.pct)
			}
			w.set(2+k, row, total, st.integer)
			row++
		}
	}
}

// stateHeads writes a header row: first, a column per state, and the windows; tall enough for
// state names on two lines.
func (w *cellWriter) stateHeads(st *styles, row int, first string, k int, r *Result) {
	w.text(1, row, first, st.header)
	labels := stateLabels(r)
	for s := 0; s < k; s++ {
		w.text(2+s, row, labels[s], st.headerNum)
	}
	w.text(2+k, row, "windows", st.headerNum)
	if w.err == nil {
		w.err = w.f.SetRowHeight(w.sheet, row, 30)
	}
}

// repeat is n copies of v.
func repeat(v float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}
