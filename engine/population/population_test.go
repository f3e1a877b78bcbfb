package population

import (
	"context"
	"errors"
	"math/big"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// TestDecimalGrammar pins the one grammar of user amounts: plain decimal
// text only.
func TestDecimalGrammar(t *testing.T) {
	for in, want := range map[string]string{
		"10": "10", "10.5": "21/2", "0.01": "1/100", ".5": "1/2", "10.": "10", "+10": "10",
		"-10": "-10", "007": "7", " 10 ": "10", "1_000": "1000", "1_000.000_1": "10000001/10000", "0": "0",
	} {
		r, ok := ParseDecimal(in)
		if !ok {
			t.Errorf("ParseDecimal(%q) refused", in)
			continue
		}
		if r.RatString() != want {
			t.Errorf("ParseDecimal(%q) = %s, want %s", in, r.RatString(), want)
		}
	}
	// big.Rat.SetString accepts every one of the first eight; strconv.ParseFloat
	// several of the others.
	for _, in := range []string{"0x10", "0X10", "0b1", "0o7", "1e3", "1E3", "1/2", "0x1p4",
		"inf", "Inf", "nan", "", " ", ".", "+", "-", "1,000", "1 000", "1__0", "_1", "1_", "1._5",
		"--1", "+-1", "1.2.3", "١٠", "10%", "$10", "1.5e-3"} {
		if r, ok := ParseDecimal(in); ok {
			t.Errorf("ParseDecimal(%q) = %v, want it refused", in, r)
		}
	}
}

// TestFieldErrors checks that every refusal is a *FieldError naming its
// field and value, rendered in the caller's names.
func TestFieldErrors(t *testing.T) {
	flags := func(f string) string {
		return map[string]string{FieldWhere: "--where", FieldSigns: "--signs", FieldMin: "--min"}[f]
	}
	keys := func(f string) string {
		return map[string]string{FieldWhere: "filter", FieldSigns: "signs", FieldMin: "min_amount"}[f]
	}
	for _, c := range []struct {
		err            error
		field, value   string
		plain, cli, pk string
	}{
		{func() error { _, err := ParseMin("0x10"); return err }(), FieldMin, "0x10",
			`min "0x10": not a plain decimal number`, `--min "0x10": not a plain decimal number`, `min_amount "0x10": not a plain decimal number`},
		{func() error { _, err := ParseMin("1e3"); return err }(), FieldMin, "1e3",
			`min "1e3": not a plain decimal number`, `--min "1e3": not`, `min_amount "1e3": not`},
		{func() error { _, err := ParseMin("-5"); return err }(), FieldMin, "-5",
			`min "-5": the minimum is on absolute amounts; give 0 or more (choose the sign with signs)`,
			`--min "-5": the minimum is on absolute amounts; give 0 or more (choose the sign with --signs)`,
			`min_amount "-5": the minimum is on absolute amounts; give 0 or more (choose the sign with signs)`},
		{CheckSigns("all"), FieldSigns, "all", `signs "all": give positive, negative or both`, `--signs "all": give positive, negative or both`, `signs "all": give positive`},
		{Spec{Signs: "positive", Min: "ten"}.Check(), FieldMin, "ten", `min "ten": not a plain decimal number`, `--min "ten"`, `min_amount "ten"`},
		{func() error { _, err := MinUnits("100000000000000000", AmountType{18, 2}); return err }(), FieldMin, "100000000000000000",
			`min "100000000000000000": above the largest amount a DECIMAL(18,2) can hold`, `--min "100000000000000000": above`, `min_amount "100000000000000000": above`},
	} {
		fe, ok := AsFieldError(c.err)
		if !ok {
			t.Errorf("%v: not a *FieldError", c.err)
			continue
		}
		if fe.Field != c.field || fe.Value != c.value {
			t.Errorf("%v: field %q value %q, want %q %q", c.err, fe.Field, fe.Value, c.field, c.value)
		}
		if got := fe.Error(); !strings.HasPrefix(got, c.plain) || strings.Contains(got, "--") {
			t.Errorf("Error() = %q, want it to start %q and name no flag", got, c.plain)
		}
		if got := fe.Render(flags); !strings.HasPrefix(got, c.cli) {
			t.Errorf("Render(flags) = %q, want it to start %q", got, c.cli)
		}
		if got := fe.Render(keys); !strings.HasPrefix(got, c.pk) {
			t.Errorf("Render(keys) = %q, want it to start %q", got, c.pk)
		}
	}
	if (Spec{}).WithDefaults().Check() != nil {
		t.Error("the default population was refused")
	}
}

// row is one ledger row of the test: amount in cents (nil: NULL) and entity.
type row struct {
	cents  *int64
	entity string
}

func c(v int64) *int64 { return &v }

var rows = []row{
	{c(1250), "A"}, {c(1000), "A"}, {c(999), "B"}, {c(0), "A"}, {c(0), "B"}, {c(-1000), "A"},
	{c(-2500), "B"}, {c(-999), "A"}, {c(5), "B"}, {c(-5), "B"}, {c(470000), "A"}, {c(-470000), "B"},
	{c(123456789), "B"}, {c(100), "C"}, {c(-100), "C"}, {nil, "A"}, {c(1001), "C"}, {c(-1001), "C"},
}

func testWorkspace(t *testing.T) *workspace.Workspace {
	t.Helper()
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	if _, err := ws.Conn.ExecContext(ctx, queries.Render("create_ledger", map[string]string{"amount_type": "DECIMAL(18,2)"})); err != nil {
		t.Fatal(err)
	}
	for i, r := range rows {
		var amount any
		if r.cents != nil {
			amount = AmountType{18, 2}.Text(big.NewInt(*r.cents))
		}
		if _, err := ws.Conn.ExecContext(ctx, "INSERT INTO ledger (row_id, file_id, line, amount, entity) VALUES (?, 1, ?, CAST(? AS DECIMAL(18,2)), ?)", i+1, i+2, amount, r.entity); err != nil {
			t.Fatal(err)
		}
	}
	return ws
}

// expect classifies the rows in Go, independently of the SQL: the filter
// is entity <> 'B' (or none), then the signs and the minimum in cents.
func expect(spec Spec, minCents int64, filterB bool) (tested []int64, left Left) {
	for _, r := range rows {
		switch {
		case filterB && r.entity == "B":
			left.Filtered++
		case r.cents == nil:
			left.NoAmount++
		default:
			v := *r.cents
			sign := spec.Signs == Both || spec.Signs == Positive && v > 0 || spec.Signs == Negative && v < 0
			abs := v
			if abs < 0 {
				abs = -abs
			}
			switch {
			case sign && abs >= minCents:
				tested = append(tested, abs)
			case v == 0:
				left.Zero++
			case !sign:
				left.OtherSign++
			default:
				left.BelowMin++
			}
		}
	}
	return tested, left
}

// TestSignsAndLeftOut prepares every sign mode with several minimums and
// with and without a filter, and checks the population's SQL (the rows
// Where selects and the sum of Abs over them) and LeftOut against the Go
// classification of the same rows.
func TestSignsAndLeftOut(t *testing.T) {
	ws := testWorkspace(t)
	ctx := context.Background()
	for _, signs := range []string{Positive, Negative, Both} {
		for _, min := range []struct {
			text  string
			cents int64
		}{{"0", 0}, {"10", 1000}, {"10.001", 1001}, {".05", 5}, {"1_000", 100000}} {
			for _, filterB := range []bool{false, true} {
				spec := Spec{Signs: signs, Min: min.text}
				if filterB {
					spec.Where = "entity <> 'B'"
				}
				p, err := Prepare(ctx, ws, spec)
				if err != nil {
					t.Fatalf("%+v: %v", spec, err)
				}
				if p.MinUnits.Int64() != min.cents {
					t.Errorf("%+v: MinUnits %v, want %d", spec, p.MinUnits, min.cents)
				}
				wantTested, wantLeft := expect(spec, min.cents, filterB)
				var wantSum int64
				for _, v := range wantTested {
					wantSum += v
				}
				w := p.Where()
				var n int64
				var sum *string
				q := "SELECT count(*), CAST(sum(" + p.Abs("amount") + ") AS VARCHAR) FROM ledger WHERE " + w.SQL
				if err := ws.Conn.QueryRowContext(ctx, q, w.Args...).Scan(&n, &sum); err != nil {
					t.Fatalf("%+v: %v\n%s", spec, err, q)
				}
				gotSum := "0.00"
				if sum != nil {
					gotSum = *sum
				}
				if n != int64(len(wantTested)) || gotSum != (AmountType{18, 2}).Text(big.NewInt(wantSum)) {
					t.Errorf("%+v: Where selects %d rows summing |amount| %s, want %d summing %d cents", spec, n, gotSum, len(wantTested), wantSum)
				}
				tested, left, err := p.LeftOut(ctx, ws)
				if err != nil {
					t.Fatal(err)
				}
				if tested != int64(len(wantTested)) || left != wantLeft {
					t.Errorf("%+v: LeftOut tested %d %+v, want %d %+v", spec, tested, left, len(wantTested), wantLeft)
				}
				if tested+left.Total() != int64(len(rows)) {
					t.Errorf("%+v: tested %d + left %d != rows %d", spec, tested, left.Total(), len(rows))
				}
				total, kept, err := p.Rows(ctx, ws)
				if err != nil || total != int64(len(rows)) || kept != total-wantLeft.Filtered {
					t.Errorf("%+v: Rows %d %d %v, want %d %d", spec, total, kept, err, len(rows), int64(len(rows))-wantLeft.Filtered)
				}
			}
		}
	}
}

// TestPrepareRefuses checks the refusals that need the workspace: the
// filter (sqlguard's error kept inside the field error) and a minimum
// beyond the amount type.
func TestPrepareRefuses(t *testing.T) {
	ws := testWorkspace(t)
	ctx := context.Background()
	_, err := Prepare(ctx, ws, Spec{Where: "nosuch > 1"})
	fe, ok := AsFieldError(err)
	if !ok || fe.Field != FieldWhere || errors.Unwrap(err) == nil || !strings.Contains(err.Error(), "nosuch") {
		t.Errorf("bad filter: %v", err)
	}
	_, err = Prepare(ctx, ws, Spec{Where: "amount > 0; DROP TABLE ledger"})
	if fe, ok := AsFieldError(err); !ok || fe.Field != FieldWhere {
		t.Errorf("a second statement in the filter: %v", err)
	}
	_, err = Prepare(ctx, ws, Spec{Min: "10000000000000000"})
	if fe, ok := AsFieldError(err); !ok || fe.Field != FieldMin || !strings.Contains(err.Error(), "DECIMAL(18,2)") {
		t.Errorf("a minimum above the type: %v", err)
	}
	p, err := Prepare(ctx, ws, Spec{Min: "9999999999999999.99"})
	if err != nil || p.MinUnits.String() != "999999999999999999" {
		t.Errorf("the largest minimum the type holds: %v %v", p, err)
	}
	for _, in := range []string{"0x10", "1e1", "0b1010", "1/2"} {
		if _, err := Prepare(ctx, ws, Spec{Min: in}); err == nil {
			t.Errorf("minimum %q accepted", in)
		}
	}
}

// TestEmptyError checks the words of an empty population in both namings.
func TestEmptyError(t *testing.T) {
	err := NoAmounts(6, Left{Zero: 1, OtherSign: 1, BelowMin: 4}, "100000")
	want := "no amounts to test: 6 rows match the filter, 1 are zero, 1 of the other sign, 4 below the minimum 100000 (try signs both or a lower min)"
	if err.Error() != want {
		t.Errorf("Error() = %q, want %q", err.Error(), want)
	}
	var w Worded
	if !errors.As(err, &w) {
		t.Fatal("not Worded")
	}
	flags := map[string]string{FieldSigns: "--signs", FieldMin: "--min"}
	if got := w.Render(func(f string) string { return flags[f] }); !strings.HasSuffix(got, "(try --signs both or a lower --min)") {
		t.Errorf("Render(flags) = %q", got)
	}
}
