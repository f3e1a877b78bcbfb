// Package jsondoc owns how leadline writes a JSON document: every --format
// json output, results.json and manifest.json.
package jsondoc

import (
	"bytes"
	"encoding/json"
	"io"
)

// Write writes v as one JSON document indented by two spaces and ended by
// a newline. <, > and & are written as they are, not escaped for HTML (a
// selection reads "|amount| >= 10"). Nothing is written when v cannot be
// encoded. Maps are written with sorted keys, so the same value gives the
// same bytes.
func Write(w io.Writer, v any) error {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}
