package battery

import (
	"math/big"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/load"
)

// The leading digits of 2^n and of the Fibonacci numbers follow Benford's
// law in the limit (P. Diaconis 1977, The distribution of leading digits
// and uniform distribution mod 1, Annals of Probability 5(1), 72-81). The
// first terms computed exactly with math/big are an independent reference
// for the whole pipeline: CSV text -> loader -> DECIMAL -> one scan ->
// bin counts.

// leadingAmount writes the leading significant digits of n as an amount
// with two decimal places and e integer digits (2 <= e <= 12), so that the
// amounts spread over 10 to 10^12. The digits are cut, not rounded: the
// amount keeps the leading digits of n exactly.
func leadingAmount(n *big.Int, e int) string {
	d := n.String()
	if len(d) > 15 {
		d = d[:15] // the leading 15 significant digits
	}
	d += strings.Repeat("0", 15-len(d))
	return d[:e] + "." + d[e:e+2]
}

// firstThreeOfBig is the reference: the first three significant digits of
// n from its decimal text, padded with zeros (1 -> 100, 64 -> 640).
func firstThreeOfBig(n *big.Int) int {
	d := n.String() + "00"
	return int(d[0]-'0')*100 + int(d[1]-'0')*10 + int(d[2]-'0')
}

func TestPowersOfTwoAndFibonacci(t *testing.T) {
	ws := openWS(t)
	lines := []string{"amount,entity"}
	ref := map[string]*Counts{"pow2": NewCounts(), "fib": NewCounts()}
	i := 0
	add := func(seg string, n *big.Int) {
		lines = append(lines, leadingAmount(n, 2+i%11)+","+seg)
		ref[seg].FirstThree[firstThreeOfBig(n)-100]++
		i++
	}
	p := big.NewInt(1)
	for k := 0; k < 10000; k++ { // 2^0 .. 2^9999
		add("pow2", p)
		p = new(big.Int).Lsh(p, 1)
	}
	a, b := big.NewInt(1), big.NewInt(1)
	for k := 0; k < 2000; k++ { // F(1) .. F(2000)
		add("fib", a)
		a, b = b, new(big.Int).Add(a, b)
	}
	loadCSV(t, ws, "diaconis.csv", lines, load.Options{})

	r := run(t, ws, Options{By: []string{"entity"}})
	all := NewCounts()
	all.Add(ref["pow2"])
	all.Add(ref["fib"])
	if r.Tested != 12000 {
		t.Fatalf("tested %d amounts, want 12000 (exclusions %+v)", r.Tested, r.Exclusions)
	}
	for _, test := range []benford.Test{benford.FirstDigit, benford.FirstTwo, benford.FirstThree} {
		got, want := r.Counts.Bins(test), all.Bins(test)
		for k := range want {
			if got[k] != want[k] {
				lo, _ := test.Bins()
				t.Errorf("%s bin %d: battery %d, math/big %d", test.Name(), lo+k, got[k], want[k])
			}
		}
	}
	if len(r.SegmentResults) != 2 {
		t.Fatalf("%d segments, want 2", len(r.SegmentResults))
	}
	for _, sr := range r.SegmentResults {
		name := sr.Key[0].String
		want := ref[name]
		for _, test := range []benford.Test{benford.FirstDigit, benford.FirstTwo, benford.FirstThree} {
			got, w := sr.Counts.Bins(test), want.Bins(test)
			for k := range w {
				if got[k] != w[k] {
					t.Fatalf("%s: %s bin %d: battery %d, math/big %d", name, test.Name(), k, got[k], w[k])
				}
			}
		}
		// Close conformity of the first-two digits (Nigrini 2012 range,
		// MAD < 0.0012, from memory) for each sequence.
		var f2 *benford.Result
		for i := range sr.Results {
			if sr.Results[i].Test == benford.FirstTwo {
				f2 = &sr.Results[i]
			}
		}
		if f2 == nil || f2.Conformity != benford.Close {
			t.Errorf("%s: first-two digits result %+v, want close conformity", name, f2)
		} else {
			t.Logf("%s: first-two MAD %.5f (%s), N %d", name, f2.MAD, f2.Conformity, f2.N)
		}
	}
	for _, res := range r.Tests {
		if res.Test == benford.FirstTwo {
			if res.Conformity != benford.Close {
				t.Errorf("both sequences: first-two MAD %.5f is %s, want close", res.MAD, res.Conformity)
			}
			t.Logf("both sequences: first-two MAD %.5f", res.MAD)
		}
	}
}
