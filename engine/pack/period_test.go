package pack

import (
	"context"
	"reflect"
	"testing"
)

// TestPeriodSegments: year and quarter of the posting date are segment
// columns of the pack as of the command line. A battery segmentation
// joined with + is one ranking of the combinations (what scan --by
// entity,quarter ranks); each entry of the list is a ranking of its own;
// [limits] by combines its columns, as limits --by does.
func TestPeriodSegments(t *testing.T) {
	path := packDir(t, `[pack]
name = "one"
client = "Client A"
period = "2025"
[[source]]
files = ["skerrimoor_ledger_2025.parquet"]
[battery]
segments = ["entity+quarter", "year"]
[limits]
by = ["entity", "quarter"]
`)
	pl, probs := Check(context.Background(), mustRead(t, path))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Error())
	}
	if got, want := pl.Battery.Segmentations, [][]string{{"entity", "quarter"}, {"year"}}; !reflect.DeepEqual(got, want) {
		t.Errorf("battery segmentations %q, want %q", got, want)
	}
	if got, want := pl.Battery.Options.By, []string{"entity", "quarter"}; !reflect.DeepEqual(got, want) {
		t.Errorf("the battery's first segmentation %q, want %q (as scan --by entity,quarter)", got, want)
	}
	if got, want := pl.Limits.By, []string{"entity", "quarter"}; !reflect.DeepEqual(got, want) {
		t.Errorf("limits by %q, want %q", got, want)
	}
}
