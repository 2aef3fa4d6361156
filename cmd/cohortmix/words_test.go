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
