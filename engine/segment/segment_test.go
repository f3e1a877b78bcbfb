package segment

import (
	"database/sql"
	"reflect"
	"sort"
	"testing"
)

func v(s string) sql.NullString { return sql.NullString{String: s, Valid: true} }

var blank = sql.NullString{}

// TestKey: map keys stay distinct where joined labels would collide, blanks
// sort first, and the JSON and drill forms name every column.
func TestKey(t *testing.T) {
	a := Key{v("a / b"), v("c")}
	b := Key{v("a"), v("b / c")}
	if a.Label() != b.Label() {
		t.Fatalf("labels %q and %q: the test needs keys whose labels collide", a.Label(), b.Label())
	}
	if a.String() == b.String() {
		t.Errorf("different keys share the map key %q", a.String())
	}
	if (Key{blank, v("")}).String() == (Key{v(""), blank}).String() {
		t.Error("blank and empty text share a map key")
	}
	keys := []Key{{v("b")}, {v("a")}, {blank}, {v("a"), v("x")}}
	sort.Slice(keys, func(i, j int) bool { return keys[i].Less(keys[j]) })
	var got []string
	for _, k := range keys {
		got = append(got, k.Label())
	}
	if want := []string{"(blank)", "a", "a / x", "b"}; !reflect.DeepEqual(got, want) {
		t.Errorf("order %q, want %q", got, want)
	}
	segs := []Segment{{Name: "entity"}, {Name: "month"}}
	k := Key{v("SHOR"), blank}
	vals := k.Values(segs)
	if len(vals) != 2 || vals["entity"] == nil || *vals["entity"] != "SHOR" || vals["month"] != nil {
		t.Errorf("values %v", vals)
	}
	if Key(nil).Values(segs) != nil || k.Values(nil) != nil {
		t.Error("the whole selection has no values")
	}
	if d := k.DrillSegments(segs); !reflect.DeepEqual(d, []string{"entity=SHOR", "month="}) {
		t.Errorf("drill segments %q", d)
	}
	s := Segment{Name: "x", raw: `"x"`, normal: "upper(%s)", row: `upper("x")`}
	if s.Normal("ll_s1") != "upper(ll_s1)" || s.Raw() != `"x"` || s.Row() != `upper("x")` {
		t.Errorf("SQL forms %q %q %q", s.Raw(), s.Normal("ll_s1"), s.Row())
	}
}

// TestPeriods: the labels of the posted date's periods are checked, and
// each period's SQL is the label format applied to posted.
func TestPeriods(t *testing.T) {
	for _, c := range []struct {
		name, value string
		ok          bool
	}{
		{"year", "2025", true}, {"year", "25", false},
		{"quarter", "2025-Q1", true}, {"Quarter", "2025-Q4", true}, {"quarter", "2025-Q5", false}, {"quarter", "2025Q1", false},
		{"month", "2025-12", true}, {"month", "2025-13", false}, {"month", "2025-1", false},
		{"entity", "anything", true}, // not a period: not checked here
	} {
		if err := CheckPeriod(c.name, c.value); (err == nil) != c.ok {
			t.Errorf("CheckPeriod(%s, %s): %v", c.name, c.value, err)
		}
	}
	expr, label, ok := PeriodOfPosted("QUARTER")
	if !ok || label != "quarter" || expr != "strftime(posted, '%Y') || '-Q' || CAST(quarter(posted) AS VARCHAR)" {
		t.Errorf("PeriodOfPosted(QUARTER) = %q, %q, %v", expr, label, ok)
	}
	if _, _, ok := PeriodOfPosted("week"); ok {
		t.Error("week is not a period of leadline")
	}
}
