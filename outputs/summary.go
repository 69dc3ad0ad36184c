package outputs

import (
	"encoding/json"
	"fmt"
)

// SummaryName is the file name of the run summary in an output directory.
const SummaryName = "summary.json"

// WriteJSON writes v as indented JSON (two spaces, final newline) to path
// atomically. v is anything encoding/json accepts; NaN and infinities are
// not JSON and make it return an error (store them as null or strings).
// Errors name path.
func WriteJSON(path string, v any) error {
	return writeJSON(defaultFS, path, v)
}

func writeJSON(fsys fileSystem, path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Errorf("outputs: write %s: %w", path, err)
	}
	b = append(b, '\n')
	return writeAtomic(fsys, path, func(tmp tempFile) error {
		_, err := tmp.Write(b)
		return err
	})
}
