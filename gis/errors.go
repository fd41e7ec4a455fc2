package gis

import (
	"fmt"
	"strings"
)

// Problem is one finding about the input that did not stop the run (a row of problems.csv).
type Problem struct {
	File    string // layer file name as given (base name)
	Feature int    // 1-based feature index in that file; 0 when not about one feature
	ID      string // the feature's id value, "" if none
	Field   string // property name, or "geometry"
	What    string // what is wrong, lower case: `diameter -6 is not > 0`
	Action  string // what headroom did and what the user can do
}

// FieldError is a fatal input error, modelled on csv.ParseError.
// Feature is 1-based; 0 means the whole file. Empty parts are left out of
// the message:
//
//	pipes.geojson: feature 17 (id "P-204"): field "DIAM_IN": <err>
type FieldError struct {
	File    string
	Feature int
	ID      string
	Field   string
	Err     error
}

// Error formats the error as `file: feature N (id "X"): field "F": err`.
func (e *FieldError) Error() string {
	var b strings.Builder
	sep := func() {
		if b.Len() > 0 {
			b.WriteString(": ")
		}
	}
	if e.File != "" {
		b.WriteString(e.File)
	}
	if e.Feature > 0 {
		sep()
		fmt.Fprintf(&b, "feature %d", e.Feature)
		if e.ID != "" {
			fmt.Fprintf(&b, " (id %q)", e.ID)
		}
	} else if e.ID != "" {
		sep()
		fmt.Fprintf(&b, "id %q", e.ID)
	}
	if e.Field != "" {
		sep()
		fmt.Fprintf(&b, "field %q", e.Field)
	}
	if e.Err != nil {
		sep()
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns the underlying error.
func (e *FieldError) Unwrap() error { return e.Err }
