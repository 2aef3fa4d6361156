package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// Every option a library text names by its Go name reaches the command line as a flag: a text
// that names an option without a flag in optionFlags fails here, with the file it is in.
func TestLibraryOptionsHaveFlags(t *testing.T) {
	t.Parallel()
	literal := regexp.MustCompile("\"(?:[^\"\\\\\n]|\\\\.)*\"")
	option := regexp.MustCompile(`\b(?:cohort|job|normalize|profile|reports)\.[A-Z]\w*(?:\.[A-Z]\w*)?`)
	found := 0
	for _, dir := range []string{"cluster", "cluster/groupstat", "cohort", "cohort/job", "normalize", "profile", "reports"} {
		files, _ := filepath.Glob(filepath.Join("..", "..", dir, "*.go"))
		for _, f := range files {
			if strings.HasSuffix(f, "_test.go") {
				continue
			}
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			for _, lit := range literal.FindAllString(string(b), -1) {
				if !option.MatchString(lit) {
					continue
				}
				found++
				if left := option.FindString(flagWords(lit)); left != "" {
					t.Errorf("%s: %s names %s, which has no flag in optionFlags", f, lit, left)
				}
			}
		}
	}
	if found < 20 {
		t.Errorf("%d library texts name an option; the scan finds too few to be looking in the right place", found)
	}
	for _, flag := range []string{"--min-windows", "--features", "--temp", "--groups", "--window-length"} {
		seen := false
		for _, f := range optionFlags {
			seen = seen || strings.HasPrefix(f, flag)
		}
		if !seen {
			t.Errorf("no library option is named %s", flag)
		}
	}
}

// Issue 28: package names and Go option names reached the command line's messages.
func TestUserWordsDropPackageNames(t *testing.T) {
	t.Parallel()
	for in, want := range map[string]string{
		"job: the census of shard 2 was taken of other input files":                               "the census of shard 2 was taken of other input files",
		"a.csv: job.Options.Groups asks for 5 or more groups (cluster: too few)":                  "a.csv: --groups asks for 5 or more groups (too few)",
		"m.json: cohort: 9 participants need 1 MiB of distances; use group.Options.Method kmeans": "m.json: 9 participants need 1 MiB of distances; use --method kmeans",
		"a.csv:3:5: f1: \"cohort: x\" is not a number":                                            `a.csv:3:5: f1: "cohort: x" is not a number`,
	} {
		if got := userWords(in); got != want {
			t.Errorf("userWords(%q)\n got %q\nwant %q", in, got, want)
		}
	}
}

// Issue 28: check accepted three participants that group then refused (the default groups
// reach 8). Now group tries the numbers of groups the participants allow, and says so.
func TestThreeParticipantsAreGroupedAsCheckSays(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	in := writeFile(t, dir, "c.csv", cohortText(3, 60))
	if out := mustRun(t, "check", in); !strings.Contains(out, "the tables can be analysed") {
		t.Fatalf("check: %s", out)
	}
	mustRun(t, "group", in, "--out", filepath.Join(dir, "r.xlsx"), "--quiet")
	if book := workbookText(t, filepath.Join(dir, "r.xlsx")); !strings.Contains(book, "with 3 participants, up to 2 groups were tried, of the up to 8 asked for") {
		t.Error("the workbook does not say that fewer groups were tried")
	}
}

// Refresh's library error names the library's call for a new grouping; the command line says
// the command instead.
func TestRefreshMismatchNamesTheCommand(t *testing.T) {
	t.Parallel()
	got := userWords("job: a.csv: the features (x) differ from the previous model's (y): cohort: files do not agree; refresh needs the same features, or start anew with job.Analyze")
	if want := "a.csv: the features (x) differ from the previous model's (y): files do not agree; refresh needs the same features, or start anew with 'cohortmix group'"; got != want {
		t.Errorf("\n got %s\nwant %s", got, want)
	}
}
