package numfmt

import (
	"math"
	"math/big"
	"strconv"
	"testing"
)

func TestInt(t *testing.T) {
	for _, c := range []struct {
		n    int64
		want string
	}{
		{0, "0"},
		{7, "7"},
		{999, "999"},
		{1000, "1,000"},
		{-1000, "-1,000"},
		{-999, "-999"},
		{123456, "123,456"},
		{1234567, "1,234,567"},
		{50_000_000, "50,000,000"},
		{math.MaxInt64, "9,223,372,036,854,775,807"},
		{math.MinInt64, "-9,223,372,036,854,775,808"},
	} {
		if got := Int(c.n); got != c.want {
			t.Errorf("Int(%d) = %q, want %q", c.n, got, c.want)
		}
	}
}

// TestIntAgainstBig checks Int against an independent grouping: math/big's
// text of n, cut into threes from the right by arithmetic on n.
func TestIntAgainstBig(t *testing.T) {
	for n := int64(-3000); n <= 3000; n += 7 {
		check(t, n)
	}
	for n := int64(1); n > 0 && n < math.MaxInt64/3; n = n*3 + 1 {
		check(t, n)
		check(t, -n)
	}
}

func check(t *testing.T, n int64) {
	t.Helper()
	a := new(big.Int).Abs(big.NewInt(n))
	thousand := big.NewInt(1000)
	var groups []string
	for a.Cmp(thousand) >= 0 {
		q, r := new(big.Int).QuoRem(a, thousand, new(big.Int))
		groups = append([]string{"," + leftPad(r.String())}, groups...)
		a = q
	}
	want := a.String()
	for _, g := range groups {
		want += g
	}
	if n < 0 {
		want = "-" + want
	}
	if got := Int(n); got != want {
		t.Errorf("Int(%d) = %q, want %q", n, got, want)
	}
}

func leftPad(s string) string {
	for len(s) < 3 {
		s = "0" + s
	}
	return s
}

func TestGroup(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"", ""},
		{"12", "12"},
		{"1234", "1,234"},
		{"-1234567.89", "-1,234,567.89"},
		{"+1234.5", "+1,234.5"},
		{"1234.56789", "1,234.56789"},
		{"999.999", "999.999"},
		{"0.001234", "0.001234"},
		{".5", ".5"},
		{"1.5e+06", "1.5e+06"},
		{"1234e5", "1234e5"},
		{"n/a", "n/a"},
		{"1,234", "1,234"},
		{strconv.FormatInt(1e12, 10), "1,000,000,000,000"},
	} {
		if got := Group(c.in); got != c.want {
			t.Errorf("Group(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}
