package battery

import "testing"

// TestAddPacked reads the packed text of battery_scan_segments: groups of
// both kinds, exclusion codes, a group repeated (two stored values that
// fold into one segment) and malformed texts, which must fail rather than
// be skipped.
func TestAddPacked(t *testing.T) {
	c := NewCounts()
	if err := addPacked(c, "f123 4 5000,l7 3 120,f-1 2 0,f-3 5 45,l-3 5 45,f123 1 1250.5,l7 1 0.25", 100); err != nil {
		t.Fatal(err)
	}
	if c.FirstThree[23] != 5 || c.FirstThreeSum[23] != 62.505 {
		t.Errorf("first-three bin 123: count %d sum %v, want 5 and 62.505", c.FirstThree[23], c.FirstThreeSum[23])
	}
	if c.LastTwo[7] != 4 || c.Left.Zero != 2 || c.Left.BelowMin != 5 {
		t.Errorf("last-two bin 07 %d (want 4), zero %d (want 2), below minimum %d (want 5)", c.LastTwo[7], c.Left.Zero, c.Left.BelowMin)
	}
	for _, bad := range []string{"x12 1 1", "f123 1", "f123", "f12x 1 1", "f123 1 1,", "f-7 1 1", "l100 1 1", "f123 one 1"} {
		if err := addPacked(NewCounts(), bad, 100); err == nil {
			t.Errorf("%q: no error", bad)
		}
	}
}
