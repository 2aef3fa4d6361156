package main

import (
	"regexp"
	"slices"
	"strings"

	"github.com/cohortmix/cohortmix/reports"
)

// optionFlags names, for the command line, the library options that errors, notes and warnings
// refer to: the libraries name their own options (cohort.ReadOptions.MinWindows), and only this
// layer knows the flags that set them.
var optionFlags = map[string]string{
	"cohort.ReadOptions.ValidDay":      "--valid-day none",
	"job.Options.Signature whole":      "--signature whole",
	"job.Options.NoAxes":               "--axes none",
	"job.Options.NoTurn":               "--turn means",
	"reports.NewOutputs force":         "--force",
	"scratch.WriteAtomic force":        "--force",
	"cohort.Quality.Excluded":          "'cohortmix check' lists each reason",
	"modelfile.Encode":                 "'cohortmix group --model'",
	"job.Analyze":                      "'cohortmix group'",
	"modelfile.Model.CheckKey the key": "--pseudonymize with the key",
	"give no key, or refit pseudonymized with job.Pseudonymize and": "leave --pseudonymize out, or refit with 'cohortmix group --pseudonymize'",
}

// The options an entry of settingTable sets are named by its flag.
func init() {
	for _, s := range settingTable {
		for _, o := range s.options {
			optionFlags[o] = "--" + s.flag
		}
	}
	optionNames = sortedOptionNames()
}

// optionNames are optionFlags' keys, longest first, so that no name is replaced inside another.
var optionNames []string

// sortedOptionNames are optionFlags' keys, longest first.
func sortedOptionNames() []string {
	names := make([]string, 0, len(optionFlags))
	for n := range optionFlags {
		names = append(names, n)
	}
	slices.SortFunc(names, func(a, b string) int { return len(b) - len(a) })
	return names
}

// flagWords names the options a text refers to by their flags.
func flagWords(s string) string {
	if !strings.Contains(s, ".") {
		return s
	}
	for _, n := range optionNames {
		s = strings.ReplaceAll(s, n, optionFlags[n])
	}
	return s
}

// packagePrefix is a Go package's name at the start of a message or of a wrapped one
// ("a.csv: job: …"), which says nothing to a person at the command line.
var packagePrefix = regexp.MustCompile(`(^|: |\()(cohort|group|job|cluster|mixture|groupstat|profile|normalize|reports|synth|scratch|modelfile|pseudonym|par|raw): `)

// userWords is flagWords without the package names.
func userWords(s string) string {
	return packagePrefix.ReplaceAllString(flagWords(s), "$1")
}

// inFlagWords names the options by their flags in every text of a result that reaches a reader.
func inFlagWords(r *reports.Result) {
	r.OptionName = flagWords
}
