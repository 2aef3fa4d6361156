package raw

import (
	"encoding/json"
	"fmt"
	"strings"
)

// ProvenanceKey names the step's record in a Parquet table's key-value metadata; a CSV table
// carries it in a file beside it, named as the table with ProvenanceSuffix added.
const (
	ProvenanceKey    = "cohortmix.features"
	ProvenanceSuffix = ".features.json"
)

// FeaturesVersion numbers the features and their definitions (FeatureNames, windowFeatures, the
// calibration and the non-wear rule); a change that alters any value raises it.
const FeaturesVersion = 1

// Provenance is how a table of windows was made: the step's settings that decide the features,
// so that the workbook of a grouping says how its features were made and a later wave can be
// made the same way.
type Provenance struct {
	Format      string   `json:"format"`  // "cohortmix features"
	Version     int      `json:"version"` // FeaturesVersion
	Tool        string   `json:"tool"`    // the program and its version
	Window      string   `json:"window"`
	Units       string   `json:"units"`             // as given: auto, g, mg or m/s2
	Rate        float64  `json:"rate_hz,omitempty"` // as given; 0: read from the times
	Range       float64  `json:"range_g"`
	Calibration bool     `json:"calibration"` // the autocalibration of van Hees et al. 2014
	NonWear     string   `json:"non_wear"`    // the rule the worn column follows
	Features    []string `json:"features"`
}

// ProvenanceOf is the record of a run of the step with these options by tool.
func ProvenanceOf(o Options, tool string) Provenance {
	o = o.withDefaults()
	units := o.Units
	if units == "" {
		units = "auto"
	}
	return Provenance{Format: "cohortmix features", Version: FeaturesVersion, Tool: tool, Window: o.Window.String(), Units: units, Rate: o.Rate,
		Range: o.Range, Calibration: !o.NoCalibration, NonWear: "van Hees et al. 2013: 60 minutes in 15-minute steps, two axes with s.d. below 13 mg and range below 50 mg",
		Features: FeatureNames}
}

// JSON is the record as the table carries it.
func (p Provenance) JSON() string {
	b, _ := json.Marshal(p) // plain fields: never fails
	return string(b)
}

// ParseProvenance reads a record a table carries; name is used in messages.
func ParseProvenance(name, text string) (Provenance, error) {
	var p Provenance
	if err := json.Unmarshal([]byte(text), &p); err != nil || p.Format != "cohortmix features" {
		return Provenance{}, fmt.Errorf("%s: not a record of the features step: %w", name, ErrInput)
	}
	return p, nil
}

// Same tells whether two records made their features alike: the same features, definitions,
// windows, units, rate, calibration and non-wear rule (the tool may differ).
func (p Provenance) Same(q Provenance) bool {
	p.Tool, q.Tool = "", ""
	return p.JSON() == q.JSON()
}

// Differences names the settings in which p differs from q, with p's value and q's, as
// "window 30s, not 1m0s".
func (p Provenance) Differences(q Provenance) string {
	var out []string
	add := func(name string, a, b any) {
		if fmt.Sprint(a) != fmt.Sprint(b) {
			out = append(out, fmt.Sprintf("%s %v, not %v", name, a, b))
		}
	}
	add("features version", p.Version, q.Version)
	add("window", p.Window, q.Window)
	add("units", p.Units, q.Units)
	add("rate (Hz; 0 read from the times)", p.Rate, q.Rate)
	add("range (g)", p.Range, q.Range)
	add("calibration", p.Calibration, q.Calibration)
	add("non-wear rule", p.NonWear, q.NonWear)
	add("features", strings.Join(p.Features, ","), strings.Join(q.Features, ","))
	return strings.Join(out, "; ")
}
