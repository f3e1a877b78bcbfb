package field

import "testing"

func TestRender(t *testing.T) {
	keys := func(f string) string {
		if k, ok := map[string]string{"by": ""}[f]; ok {
			return k
		}
		return f
	}
	for _, c := range []struct {
		err       Error
		cli, pack string
	}{
		{Error{Field: "by", Value: "vendor", Reason: `no column "vendor"`}, `--by vendor: no column "vendor"`, `vendor: no column "vendor"`},
		{Error{Field: "by", Reason: "give a column name"}, `--by: give a column name`, `give a column name`},
		{Error{Reason: "give either {width} or {per_decade}, not both"}, "give either --width or --per-decade, not both", "give either width or per_decade, not both"},
		{Error{Field: "per_decade", Value: "-1", Reason: "give a positive number"}, "--per-decade -1: give a positive number", "per_decade -1: give a positive number"},
		// Text from the user is put in once and never read as a field.
		{Error{Field: "by", Value: "{width}", Reason: "{0}: no such column", Args: []any{`no column "{width}"`}}, `--by {width}: no column "{width}": no such column`, `{width}: no column "{width}": no such column`},
		{Error{Reason: "{from} {0} {to} {1}: FROM < TO", Args: []any{5, "{1}"}}, "--from 5 --to {1}: FROM < TO", "from 5 to {1}: FROM < TO"},
	} {
		if got := c.err.Error(); got != c.cli {
			t.Errorf("Error() = %q, want %q", got, c.cli)
		}
		if got := c.err.Render(keys); got != c.pack {
			t.Errorf("Render(keys) = %q, want %q", got, c.pack)
		}
	}
}
