package queries

import (
	"strings"
	"testing"
)

// Substitution is a single pass: text put in for one placeholder is never
// scanned for placeholders again.
func TestRenderSinglePass(t *testing.T) {
	Names() // the known placeholder names come with the statements
	got, err := render("a {{filter}} b {{segment_select}}", map[string]string{
		"filter":         "descr = '{{segment_select}}'",
		"segment_select": "entity AS ll_s1, ",
	})
	if err != nil {
		t.Fatal(err)
	}
	want := "a descr = '{{segment_select}}' b entity AS ll_s1, "
	if got != want {
		t.Fatalf("render = %q, want %q", got, want)
	}
}

// A checked filter holding a string literal that looks like a placeholder
// reaches the battery's scan exactly as the guard saw it.
func TestRenderFilterLiteralStaysLiteral(t *testing.T) {
	filter := "descr = '{{segment_select}}'"
	q := Render("battery_scan", map[string]string{
		"segment_names":  "ll_s1, ",
		"segment_select": "strftime(posted, '%Y-%m') AS ll_s1, ",
		"abs":            "abs(ll_u)",
		"units":          "ll_units(amount)",
		"first3":         "ll_first3",
		"last2":          "ll_a % 100",
		"filter":         filter,
		"sign_where":     "amount IS NOT NULL",
	})
	if !strings.Contains(q, "WHERE "+filter+" AND") {
		t.Fatalf("the filter was changed on its way into the statement:\n%s", q)
	}
	if n := strings.Count(q, "strftime("); n != 1 {
		t.Fatalf("the segment expression appears %d times, want once:\n%s", n, q)
	}
}

func TestRenderRefusesUnfilledAndUnknown(t *testing.T) {
	Names()
	if _, err := render("SELECT {{filter}}, {{units}}", map[string]string{"filter": "TRUE"}); err == nil ||
		!strings.Contains(err.Error(), "{{units}} is not filled") {
		t.Fatalf("unfilled placeholder: err = %v", err)
	}
	if _, err := render("SELECT {{filter}}", map[string]string{"filter": "TRUE", "filtr": "x"}); err == nil ||
		!strings.Contains(err.Error(), "{{filtr}}") {
		t.Fatalf("misspelt key: err = %v", err)
	}
	// A key a sibling statement uses is allowed (one map serves a family).
	if _, err := render("SELECT {{filter}}", map[string]string{"filter": "TRUE", "units": "1"}); err != nil {
		t.Fatalf("sibling key refused: %v", err)
	}
	defer func() {
		if recover() == nil {
			t.Fatal("Render did not panic on an unfilled placeholder")
		}
	}()
	Render("battery_filtered_rows", nil)
}

// Comment lines document a statement and are not part of it, so a
// placeholder named in a comment is not filled there.
func TestStatementsHoldNoCommentLines(t *testing.T) {
	for _, name := range Names() {
		for _, line := range strings.Split(Get(name), "\n") {
			if strings.HasPrefix(strings.TrimSpace(line), "--") {
				t.Errorf("%s keeps a comment line: %q", name, line)
			}
		}
	}
}

func TestPlaceholders(t *testing.T) {
	got := strings.Join(Placeholders("drill_records"), ",")
	if got != "where,file_col,order,limit" {
		t.Fatalf("Placeholders(drill_records) = %s", got)
	}
}
