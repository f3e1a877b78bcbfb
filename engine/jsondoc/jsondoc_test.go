package jsondoc

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

func TestWrite(t *testing.T) {
	var b bytes.Buffer
	doc := map[string]any{"selection": []string{"|amount| >= 10", "a < b & c"}, "n": 3, "a": nil}
	if err := Write(&b, doc); err != nil {
		t.Fatal(err)
	}
	want := `{
  "a": null,
  "n": 3,
  "selection": [
    "|amount| >= 10",
    "a < b & c"
  ]
}
`
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
	var back map[string]any
	if err := json.Unmarshal(b.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
}

func TestWriteNothingOnError(t *testing.T) {
	var b bytes.Buffer
	err := Write(&b, map[string]any{"ok": 1, "bad": math.NaN()})
	if err == nil || !strings.Contains(err.Error(), "NaN") {
		t.Errorf("error %v, want one naming NaN", err)
	}
	if b.Len() != 0 {
		t.Errorf("wrote %q on error, want nothing", b.String())
	}
}
