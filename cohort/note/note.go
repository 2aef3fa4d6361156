// Package note carries what the library tells the reader of a run as data, not as sentences:
// what happened (a Kind), the numbers it is about, and the option that changes it, named by its
// Go name. The words are made where people read them (package reports, and the command line,
// which also names the options as its flags); tests look at the data.
//
// The grouping's notes (group.Grouping.Notes) and the reading's (cohort.Quality.Notes) follow
// this convention; the other notes of the library still come as text and are to follow it.
package note

// Kind names what a note says; each kind documents the order of its numbers.
type Kind string

// Note is one thing the library tells the reader of a run.
type Note struct {
	Kind   Kind
	Ints   []int     // counts, in the order the kind documents
	Floats []float64 // measures, in the order the kind documents
	Names  []string  // names (a rule, a column, a place in a file), in the order the kind documents
	// Option is the option that changes what the note is about, by its Go name
	// ("group.Options.Method"); "" for none.
	Option string
}
