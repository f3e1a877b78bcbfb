package pack

import (
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
)

// The example pack's extracts hold exactly the records behind the results
// they name: each first-two bin's records have that bin's first two
// digits and number as many as the battery counted in the bin; each limit
// band's records lie in the band below the limit, in the segment named.
func TestExtractsMatchTheirResults(t *testing.T) {
	_, _, res := exampleRun(t)
	run := res.Run
	col := func(tb *output.Table, name string) int {
		for i, c := range tb.Columns {
			if c.Name == name {
				return i
			}
		}
		t.Fatalf("%s has no column %s", tb.Name, name)
		return -1
	}
	// Battery bins.
	ex := run.Table("extract_first_two_bins")
	bins := run.Table("digits_first_two")
	if ex == nil || bins == nil || ex.Truncated {
		t.Fatalf("tables: %v %v", ex, bins)
	}
	binCount := map[string]int64{}
	flagged := 0
	for _, r := range bins.Rows {
		binCount[r[col(bins, "bin")].(string)] = r[col(bins, "count")].(int64)
		if f, _ := r[col(bins, "flagged")].(bool); f {
			flagged++
		}
	}
	perItem := map[string]int64{}
	for _, r := range ex.Rows {
		item := r[col(ex, "item")].(string)
		bin := strings.TrimPrefix(item, "first_two bin ")
		amt := r[col(ex, "amount")].(output.Decimal).Text
		digits := strings.TrimLeft(strings.ReplaceAll(amt, ".", ""), "0")
		if strings.HasPrefix(amt, "-") || !strings.HasPrefix(digits, bin) {
			t.Errorf("%s: amount %s", item, amt)
		}
		if v, _ := strconv.ParseFloat(amt, 64); v < 10 {
			t.Errorf("%s: amount %s below the population's minimum", item, amt)
		}
		perItem[bin]++
	}
	// The extract covers the flagged bins to follow up first: up to four.
	if len(perItem) != min(flagged, 4) || flagged == 0 {
		t.Errorf("want the records of %d flagged bins (up to four), got %v", flagged, perItem)
	}
	for bin, n := range perItem {
		if binCount[bin] != n {
			t.Errorf("bin %s: %d records extracted, the battery counted %d", bin, n, binCount[bin])
		}
	}
	if g := run.Table("extract_first_two_bins_by_counterparty"); g == nil || len(g.Rows) == 0 {
		t.Error("no grouped extract")
	}
	// Limit bands.
	lb := run.Table("extract_limit_bands")
	if lb == nil || len(lb.Rows) == 0 {
		t.Fatal("no limit band records")
	}
	for _, r := range lb.Rows {
		item := r[col(lb, "item")].(string) // "limit 5000.00, entity=HAUL, 4500:5000"
		parts := strings.Split(item, ", ")
		lohi := strings.Split(parts[len(parts)-1], ":")
		lo, _ := strconv.ParseFloat(lohi[0], 64)
		hi, _ := strconv.ParseFloat(lohi[1], 64)
		v, _ := strconv.ParseFloat(strings.TrimPrefix(r[col(lb, "amount")].(output.Decimal).Text, "-"), 64)
		if v < lo || v >= hi {
			t.Errorf("%s: |amount| %v outside [%v, %v)", item, v, lo, hi)
		}
		if seg := parts[1]; strings.HasPrefix(seg, "entity=") && r[col(lb, "entity")] != strings.TrimPrefix(seg, "entity=") {
			t.Errorf("%s: entity %v", item, r[col(lb, "entity")])
		}
	}
	// Duplicate groups: each group's records share the group's amount and counterparty.
	dp := run.Table("extract_repeated_payments")
	if dp == nil || len(dp.Rows) == 0 {
		t.Fatal("no duplicate group records")
	}
	groups := map[string]map[string]bool{}
	for _, r := range dp.Rows {
		item := r[col(dp, "item")].(string)
		if groups[item] == nil {
			groups[item] = map[string]bool{}
		}
		groups[item][r[col(dp, "amount")].(output.Decimal).Text+"|"+r[col(dp, "counterparty")].(string)] = true
	}
	for item, keys := range groups {
		if len(keys) != 1 {
			t.Errorf("%s: records of %d (amount, counterparty) keys", item, len(keys))
		}
	}
}
