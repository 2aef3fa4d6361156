package reports

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"errors"
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

// keyLabel is the fixed text whose HMAC with the key is the key's fingerprint.
const keyLabel = "cohortmix pseudonymization key fingerprint"

// KeyFingerprint identifies a key without revealing it: the first 16 hex digits of
// HMAC-SHA256(key, a fixed label). The model file records it, so that a later run can tell the
// same key from another one.
func KeyFingerprint(key []byte) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(keyLabel))
	return hex.EncodeToString(m.Sum(nil))[:16]
}

// ErrKey is wrapped by errors about a pseudonymization key that does not fit the model.
var ErrKey = errors.New("pseudonymization key does not fit the model")

// CheckKey tells whether a run may use this key (nil: none) with this model: a pseudonymized
// model needs the key it was written with, and a plain model takes no key.
func (m *Model) CheckKey(modelPath, keyPath string, key []byte) error {
	switch {
	case m.Pseudonymized && key == nil:
		return fmt.Errorf("%s: the model holds pseudonyms, not study ids: %w; give reports.Model.CheckKey the key it was written with, or returning participants could not be found and study ids would reach the outputs", modelPath, ErrKey)
	case !m.Pseudonymized && key != nil:
		return fmt.Errorf("%s: the model holds study ids, not pseudonyms: %w; give no key, or refit pseudonymized with reports.Pseudonymize and %s", modelPath, ErrKey, keyPath)
	case key != nil && KeyFingerprint(key) != m.KeyFingerprint:
		return fmt.Errorf("%s: was pseudonymized with another key than %s: %w; pass the key the model was written with", modelPath, keyPath, ErrKey)
	}
	return nil
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
	MarkPseudonymized(r)
}

// MarkPseudonymized records in the settings that the ids are pseudonyms, for a result whose ids
// were pseudonymized as they were read (cohort.ReadOptions.Pseudonym).
func MarkPseudonymized(r *Result) {
	r.Settings = append(r.Settings, Setting{Name: "participant ids", Value: "pseudonymized (HMAC-SHA256 with the analyst's key)"})
}
