package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/cohortmix/cohortmix/cohort/modelfile"
	"github.com/cohortmix/cohortmix/cohort/synth"
)

// The model keeps the fit's settings typed (modelfile.FitSettings), and refresh turns them back into
// flags: every flag is an entry of settingTable, whose fit flags say how refresh sets them from the model, and a command line far from the defaults
// comes back as the same options.
func TestModelFlagsCoverEveryFitFlag(t *testing.T) {
	t.Parallel()
	var m mainFlags
	cmd := &cobra.Command{}
	m.register(cmd)
	cmd.Flags().VisitAll(func(f *pflag.Flag) {
		found := false
		for _, s := range settingTable {
			found = found || s.flag == f.Name
		}
		if !found {
			t.Errorf("--%s is not in settingTable", f.Name)
		}
	})
	for _, line := range [][]string{
		{},
		{"--id", "subject", "--order", "-", "--wave", "visit", "--label", "act", "--features", "mean_*,vm_*", "--missing", "impute", "--min-windows", "7",
			"--within", "rest", "--within-features", "vm_*", "--offset-icc", "0.4", "--rest-share", "0.2", "--log", "none", "--scale", "robust-z", "--pca", "1.0",
			"--states", "5", "--states-rule", "ch", "--valley", "0.6", "--sample", "900", "--groups", "3-4", "--method", "pam-js", "--criterion", "silhouette",
			"--group-valley", "0.3", "--bootstrap", "7", "--seed", "99", "--window-length", "30s"},
		{"--axes", "none", "--pca", "4"},
		{"--axes", "mx,my,mz", "--pca", "off"},
	} {
		var given mainFlags
		c := &cobra.Command{}
		given.register(c)
		if err := c.Flags().Parse(line); err != nil {
			t.Fatal(err)
		}
		o, err := given.options([]string{"a.csv"})
		if err != nil {
			t.Fatalf("%v: %v", line, err)
		}
		var back mainFlags
		b := &cobra.Command{}
		back.register(b)
		prev := &modelfile.Model{Version: modelfile.Version, Fit: o.FitSettings(), Read: modelfile.ReadSettingsOf(o.Read)}
		if err := back.fromModel(prev, func(string) bool { return false }); err != nil {
			t.Fatal(err)
		}
		o2, err := back.options([]string{"a.csv"})
		if err != nil {
			t.Fatalf("%v, back from the model: %v", line, err)
		}
		if got, want := fmt.Sprintf("%+v", o2), fmt.Sprintf("%+v", o); got != want {
			t.Errorf("%v: back from the model\n%s\nwant\n%s", line, got, want)
		}
	}
}

// A version-2 model, whose settings are kept by flag name, still refreshes.
func TestRefreshTakesAVersion2Model(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := filepath.Join(dir, "c.csv")
	if _, err := synth.WriteFile(in, synth.Options{Participants: 40, Windows: 300, Seed: 5}); err != nil {
		t.Fatal(err)
	}
	model := filepath.Join(dir, "model.json")
	mustRun(t, "group", in, "--out", filepath.Join(dir, "a.xlsx"), "--model", model, "--states", "4", "--groups", "3")
	b, _ := os.ReadFile(model)
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "fit")
	m["version"] = 2
	m["options"] = map[string]string{"states": "4", "groups": "3", "seed": "1", "within": "align", "pca": "0.99"}
	b, _ = json.MarshalIndent(m, "", " ")
	old := filepath.Join(dir, "old.json")
	os.WriteFile(old, b, 0o644)
	out := mustRun(t, "refresh", "--previous", old, in, "--out", filepath.Join(dir, "b.xlsx"))
	if want := "40 participants grouped"; !strings.Contains(out, want) {
		t.Errorf("refresh of a version-2 model printed %q, want %q", out, want)
	}
}
