package reports

import (
	"io"

	"github.com/xuri/excelize/v2"

	"github.com/cohortmix/cohortmix/cohort/raw"
)

// SheetDevices is the sheet of the features step's report: each participant's recording and
// device calibration.
const SheetDevices = "Devices"

// CalibrationTo writes the features step's report as a workbook of one sheet: per participant,
// what was read, the device's calibration (van Hees et al. 2014) with its error before and
// after, and what became of the windows.
func CalibrationTo(w io.Writer, people []raw.Participant) error {
	f := excelize.NewFile()
	defer f.Close()
	st, err := newStyles(f)
	if err != nil {
		return err
	}
	st.footer = "Participant-level data: handle under the study's data-protection rules"
	if _, err := f.NewSheet(SheetDevices); err != nil {
		return err
	}
	t, err := openTable(f, st, SheetDevices, []float64{14, 9, 12, 13, 9, 11, 11, 10, 9, 9, 9, 9, 9, 9, 9, 10, 10, 40}, 0)
	if err != nil {
		return err
	}
	head := []string{"participant", "rate (Hz)", "samples", "units", "windows", "incomplete windows", "not-worn windows", "clipped samples",
		"still blocks", "scale x", "scale y", "scale z", "offset x (g)", "offset y (g)", "offset z (g)", "error before (mg)", "error after (mg)", "calibration"}
	numeric := make([]bool, len(head))
	for i := range numeric {
		numeric[i] = i != 0 && i != 3 && i != len(head)-1
	}
	if err := t.freeze(1); err != nil {
		return err
	}
	if err := t.headingAligned(head, numeric); err != nil {
		return err
	}
	for _, p := range people {
		state := "calibrated"
		if !p.OK {
			state = "left as read: " + p.Reason
		}
		cells := []v{{SafeCell(p.ID), st.text}, {p.Rate, st.dec1}, {p.Samples, st.integer}, {p.Units, st.text}, {p.Windows, st.integer}, {p.Incomplete, st.integer},
			{p.NonWear, st.integer}, {p.Clipped, st.integer}, {p.Still, st.integer},
			{p.Scale[0], st.dec4}, {p.Scale[1], st.dec4}, {p.Scale[2], st.dec4}, {p.Offset[0], st.dec4}, {p.Offset[1], st.dec4}, {p.Offset[2], st.dec4},
			{p.ErrorBefore, st.dec1}, {p.ErrorAfter, st.dec1}, {state, st.wrap}}
		if err := t.put(cells...); err != nil {
			return err
		}
	}
	if err := t.close(true); err != nil {
		return err
	}
	if err := f.DeleteSheet("Sheet1"); err != nil {
		return err
	}
	if err := st.pageSetup(f, SheetDevices); err != nil {
		return err
	}
	_, err = f.WriteTo(w)
	return err
}
