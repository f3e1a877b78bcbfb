// Package drilltest builds a small synthetic payables ledger for the tests
// of drill and duplicates: ordinary supplier invoices drawn from a seed,
// plus planted duplicate groups of every kind, with the plan of what was
// planted. The rows are kept in Go so that the tests can compute every
// expected answer independently of the database.
//
// The scenario is invented: 600 suppliers, each numbering its own invoices
// (so that two invoices of one supplier sometimes share a number by
// chance), a tenth of the amounts drawn from a short list of round prices
// (so that amounts repeat by chance too), a few credit notes and small
// amounts below the scan's minimum.
//
// It owns the synthetic payables ledger, with its planted groups, that the
// drill and duplicate tests run on.
package drilltest

import (
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"time"
)

// Row is one invoice line. Cents is the exact amount in cents, signed.
type Row struct {
	Line         int64 // physical line in the CSV (header = 1)
	DocID        string
	Counterparty string
	Posted       time.Time
	Cents        int64
	UserID       string
	Entity       string
	Account      string
	Descr        string
	PONumber     string // an original column leadline does not map
	Currency     string
}

// Plant is one planted group.
type Plant struct {
	Test         string // exact, same_amount, same_doc, spread, rsf
	Cents        int64  // the amount (exact, same_amount, spread, rsf: the largest)
	Counterparty string // exact, same_amount, same_doc, rsf
	DocID        string // exact, same_doc
	Posted       time.Time
	GapDays      int // same_amount: days between the two documents
	Rows         int // rows that make the group
}

// Ledger is the generated ledger and its plan.
type Ledger struct {
	Rows   []Row
	Plants []Plant
}

// Columns of the CSV, in order.
var Columns = []string{"doc_id", "counterparty", "posted", "amount", "user_id", "entity", "account", "descr", "po_number", "currency"}

var roundPrices = []int64{10000, 25000, 50000, 100000, 150000, 250000}

// Generate builds n ordinary invoices and the planted groups from seed.
func Generate(n int, seed uint64) *Ledger {
	r := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	l := &Ledger{}
	start := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	users := []string{"abarrow", "bcole", "cdunn", "dely", "efinch", "fgale", "ghart", "hivey", "jknox", "klamb", "lmoss", "mnash"}
	entities := []string{"NORTH", "SOUTH", "WEST"}
	accounts := []string{"5010", "5020", "5110", "5200", "5310", "6100", "6200", "6400"}
	descrs := []string{"Repairs", "Freight", "Packaging", "Consulting", "Rent", "Utilities", "Spare parts", "Cleaning"}
	for i := 0; i < n; i++ {
		v := r.IntN(600)
		var cents int64
		switch u := r.Float64(); {
		case u < 0.10:
			cents = roundPrices[r.IntN(len(roundPrices))]
		case u < 0.14:
			cents = 1 + r.Int64N(999) // below 10.00
		default:
			cents = int64(math.Exp(math.Log(1000)+r.Float64()*math.Log(10000)) + 0.5) // 10.00 to 100,000.00
		}
		if r.Float64() < 0.03 {
			cents = -cents // a credit note
		}
		l.Rows = append(l.Rows, Row{
			DocID:        fmt.Sprintf("INV-%04d", 1+r.IntN(5000)),
			Counterparty: fmt.Sprintf("V%04d", v+1),
			Posted:       start.AddDate(0, 0, r.IntN(365)),
			Cents:        cents,
			UserID:       users[r.IntN(len(users))],
			Entity:       entities[r.IntN(len(entities))],
			Account:      accounts[r.IntN(len(accounts))],
			Descr:        descrs[r.IntN(len(descrs))],
			PONumber:     fmt.Sprintf("PO%06d", r.IntN(1_000_000)),
			Currency:     "EUR",
		})
	}
	// pick returns an ordinary positive invoice of at least 10.00.
	pick := func() Row {
		for {
			x := l.Rows[r.IntN(n)]
			if x.Cents >= 1000 {
				return x
			}
		}
	}
	// Exact duplicates: an invoice loaded twice, identical in every column.
	for range 8 {
		x := pick()
		l.Rows = append(l.Rows, x)
		l.Plants = append(l.Plants, Plant{Test: "exact", Cents: x.Cents, Counterparty: x.Counterparty, DocID: x.DocID, Posted: x.Posted, Rows: 2})
	}
	// Same amount and supplier under another invoice number, days later
	// (six within a week, two about two months later).
	for i := range 8 {
		x := pick()
		gap := 1 + r.IntN(5)
		if i >= 6 {
			gap = 40 + r.IntN(20)
		}
		y := x
		y.DocID = x.DocID + "-B"
		y.Posted = x.Posted.AddDate(0, 0, gap)
		y.PONumber = fmt.Sprintf("PO%06d", r.IntN(1_000_000))
		l.Rows = append(l.Rows, y)
		l.Plants = append(l.Plants, Plant{Test: "same_amount", Cents: x.Cents, Counterparty: x.Counterparty, Posted: x.Posted, GapDays: gap, Rows: 2})
	}
	// Same invoice number and supplier, another amount.
	for range 6 {
		x := pick()
		y := x
		y.Cents = x.Cents + 100 + r.Int64N(50000)
		l.Rows = append(l.Rows, y)
		l.Plants = append(l.Plants, Plant{Test: "same_doc", Counterparty: x.Counterparty, DocID: x.DocID, Rows: 2})
	}
	// One odd amount paid to many suppliers.
	for _, sp := range []struct {
		cents int64
		cps   int
	}{{77777, 15}, {333333, 6}} {
		perm := r.Perm(600)
		for j := 0; j < sp.cps; j++ {
			l.Rows = append(l.Rows, Row{
				DocID: fmt.Sprintf("SP-%d-%02d", sp.cents, j), Counterparty: fmt.Sprintf("V%04d", perm[j]+1),
				Posted: start.AddDate(0, 0, r.IntN(365)), Cents: sp.cents, UserID: "lmoss", Entity: "WEST",
				Account: "6400", Descr: "Settlement", PONumber: "PO000000", Currency: "EUR",
			})
		}
		l.Plants = append(l.Plants, Plant{Test: "spread", Cents: sp.cents, Rows: sp.cps})
	}
	// A supplier with one invoice far larger than the rest.
	for j, c := range []int64{9800, 10250, 11000, 9500, 10100, 2500000} {
		l.Rows = append(l.Rows, Row{
			DocID: fmt.Sprintf("BIG-%02d", j), Counterparty: "V0999", Posted: start.AddDate(0, 0, 30*j),
			Cents: c, UserID: "ghart", Entity: "NORTH", Account: "5110", Descr: "Repairs", PONumber: "PO999999", Currency: "EUR",
		})
	}
	l.Plants = append(l.Plants, Plant{Test: "rsf", Cents: 2500000, Counterparty: "V0999", Rows: 6})
	// Shuffle, so that planted rows are not all at the end, then number.
	r.Shuffle(len(l.Rows), func(i, j int) { l.Rows[i], l.Rows[j] = l.Rows[j], l.Rows[i] })
	for i := range l.Rows {
		l.Rows[i].Line = int64(i) + 2
	}
	return l
}

// CentsText writes cents as plain decimal text: -1234 -> "-12.34".
func CentsText(c int64) string {
	neg := c < 0
	if neg {
		c = -c
	}
	s := strconv.FormatInt(c/100, 10) + "." + fmt.Sprintf("%02d", c%100)
	if neg {
		s = "-" + s
	}
	return s
}

// WriteCSV writes the ledger to path. Without lists columns to leave out
// (for a ledger that lacks, say, doc_id).
func (l *Ledger) WriteCSV(path string, without ...string) error {
	skip := map[string]bool{}
	for _, w := range without {
		skip[w] = true
	}
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := csv.NewWriter(f)
	var head []string
	for _, c := range Columns {
		if !skip[c] {
			head = append(head, c)
		}
	}
	w.Write(head)
	for _, x := range l.Rows {
		vals := map[string]string{
			"doc_id": x.DocID, "counterparty": x.Counterparty, "posted": x.Posted.Format("2006-01-02"),
			"amount": CentsText(x.Cents), "user_id": x.UserID, "entity": x.Entity, "account": x.Account,
			"descr": x.Descr, "po_number": x.PONumber, "currency": x.Currency,
		}
		rec := make([]string, 0, len(head))
		for _, c := range head {
			rec = append(rec, vals[c])
		}
		w.Write(rec)
	}
	w.Flush()
	if err := w.Error(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
