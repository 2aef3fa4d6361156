package reports

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
)

// LoadKey reads a pseudonymization key: the whole file, at least 16 bytes. The key stays with
// the analyst; the same key gives the same pseudonyms in every run.
func LoadKey(path string) ([]byte, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%s: cannot read the pseudonymization key: %w", path, err)
	}
	if len(b) < 16 {
		return nil, fmt.Errorf("%s: the pseudonymization key has %d bytes; use at least 16 random bytes (e.g. head -c 32 /dev/urandom > key)", path, len(b))
	}
	return b, nil
}

// Pseudonym is the keyed hash of a participant id: "ps-" and the first 16 hex digits of
// HMAC-SHA256(key, id) (RFC 2104; FIPS 180-4).
func Pseudonym(key []byte, id string) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(id))
	return "ps-" + hex.EncodeToString(m.Sum(nil))[:16]
}

// Pseudonymize replaces every participant id in the result by its pseudonym, so that no output
// (workbook, members CSV, model file) holds a study id.
func Pseudonymize(r *Result, key []byte) {
	for i := range r.Units {
		r.Units[i].ID = Pseudonym(key, r.Units[i].ID)
	}
	for i := range r.Quality.Excluded {
		r.Quality.Excluded[i].ID = Pseudonym(key, r.Quality.Excluded[i].ID)
	}
	if r.Changes != nil {
		for i := range r.Changes.Rows {
			r.Changes.Rows[i].ID = Pseudonym(key, r.Changes.Rows[i].ID)
		}
	}
	r.Settings = append(r.Settings, Setting{Name: "participant ids", Value: "pseudonymized (HMAC-SHA256 with the analyst's key)"})
}
