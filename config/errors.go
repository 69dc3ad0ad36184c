package config

import (
	"errors"
	"fmt"
	"strings"
)

// FieldError is a problem with one configuration key, in the manner of
// encoding/csv's ParseError. Err wraps one of the sentinels ErrSyntax,
// ErrUnit, ErrDimension, ErrRange, ErrUnknownKey, ErrConflict, ErrMissing,
// ErrFile or ErrResolution (test with errors.Is).
type FieldError struct {
	Key     string // dotted key, e.g. "membrane.viscosity", or an environment variable
	Value   string // the value as given ("" if none)
	Unit    string // the SI unit the key is written in ("" for none)
	Range   string // the valid values without the unit ("" if any value goes)
	Suggest string // for an unknown key: the closest known key, if any
	Err     error
}

func (e *FieldError) Error() string {
	var b strings.Builder
	b.WriteString(e.Key)
	if e.Value != "" {
		fmt.Fprintf(&b, " = %q", e.Value)
	}
	fmt.Fprintf(&b, ": %v", e.Err)
	if e.Range != "" || e.Unit != "" {
		b.WriteString(" (valid: ")
		switch {
		case e.Range != "" && e.Unit != "":
			b.WriteString(e.Range + " " + e.Unit)
		case e.Range != "":
			b.WriteString(e.Range)
		default:
			b.WriteString("any value in " + e.Unit)
		}
		b.WriteString(")")
	}
	return b.String()
}

func (e *FieldError) Unwrap() error { return e.Err }

// FileError is a configuration file that cannot be read or is not YAML.
type FileError struct {
	Path string
	Err  error
}

func (e *FileError) Error() string { return fmt.Sprintf("config file %s: %v", e.Path, e.Err) }
func (e *FileError) Unwrap() error { return e.Err }

// Problems returns every FieldError in err, which may be a single error or
// one joined by errors.Join, in order.
func Problems(err error) []*FieldError {
	var out []*FieldError
	var walk func(error)
	walk = func(err error) {
		switch e := err.(type) {
		case nil:
		case *FieldError:
			out = append(out, e)
		case interface{ Unwrap() []error }:
			for _, x := range e.Unwrap() {
				walk(x)
			}
		case interface{ Unwrap() error }:
			walk(e.Unwrap())
		}
	}
	walk(err)
	return out
}

// IsConfigError reports whether err comes from bad configuration (a
// FieldError or a FileError) rather than from a failure of the program.
func IsConfigError(err error) bool {
	var fe *FieldError
	var file *FileError
	return errors.As(err, &fe) || errors.As(err, &file)
}
