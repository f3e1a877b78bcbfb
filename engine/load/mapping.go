package load

import (
	"fmt"
	"sort"
	"strings"
)

// Canonical lists the canonical ledger columns (docs/design.md,
// "Canonical columns"). amount is required; the rest are optional.
var Canonical = []string{"amount", "entity", "account", "counterparty", "doc_id", "line_id", "posted", "user_id", "source", "descr", "currency"}

// textCanonical are canonical columns stored as the client's exact text.
var textCanonical = map[string]bool{
	"entity": true, "account": true, "counterparty": true, "doc_id": true,
	"line_id": true, "user_id": true, "source": true, "descr": true,
	"currency": true,
}

// reserved are ledger column names an original column may not take.
var reserved = map[string]bool{"row_id": true, "file_id": true, "line": true}

func init() {
	for _, c := range Canonical {
		reserved[c] = true
	}
}

// IsCanonical reports whether name is a canonical column.
func IsCanonical(name string) bool {
	for _, c := range Canonical {
		if c == name {
			return true
		}
	}
	return false
}

// Mapping ties canonical columns to the file's own column names. Debit and
// Credit, when both set, replace Amount: amount = debit - credit.
// CurrencyFromMarkers says that the file has no currency column and every
// amount names its currency (EUR 12.00, $12.00): each row's currency is
// its amount's marker.
type Mapping struct {
	Columns             map[string]string `json:"columns"` // canonical -> original
	Debit               string            `json:"debit,omitempty"`
	Credit              string            `json:"credit,omitempty"`
	CurrencyFromMarkers bool              `json:"currency_from_markers,omitempty"`
}

// hints are likely original names for each canonical column, lower case,
// used to suggest a mapping. Matching is on the name with spaces,
// underscores and dashes removed.
var hints = map[string][]string{
	"amount":       {"amount", "amt", "value", "net", "netamount", "amountlc", "localamount", "amountlocal", "transactionamount", "lineamount", "sum", "total", "betrag", "montant", "importe", "bedrag", "importo"},
	"entity":       {"entity", "company", "companycode", "bukrs", "legalentity", "firm", "unit", "businessunit", "org", "organisation", "organization"},
	"account":      {"account", "glaccount", "accountno", "accountnumber", "acct", "gl", "ledgeraccount", "konto", "accountcode"},
	"counterparty": {"counterparty", "vendor", "supplier", "customer", "payee", "vendorname", "suppliername", "customername", "partner", "creditor", "debtor", "vendorid", "supplierid", "customerid"},
	"doc_id":       {"docid", "document", "documentno", "documentnumber", "docno", "journal", "journalno", "journalid", "je", "jeno", "voucher", "voucherno", "invoice", "invoiceno", "invoicenumber", "belnr", "reference", "ref"},
	"line_id":      {"lineid", "line", "lineno", "linenumber", "item", "itemno", "buzei", "seq"},
	"posted":       {"posted", "postingdate", "postdate", "date", "entrydate", "transactiondate", "documentdate", "glpostingdate", "effectivedate", "budat", "datum"},
	"user_id":      {"userid", "user", "username", "enteredby", "createdby", "preparer", "postedby", "usnam", "author"},
	"source":       {"source", "sourcesystem", "journalsource", "module", "doctype", "documenttype", "journaltype", "ledger", "origin"},
	"descr":        {"descr", "description", "text", "memo", "narrative", "linedescription", "itemtext", "comment", "details"},
	"currency":     {"currency", "curr", "ccy", "cur", "currencycode", "currencykey", "transactioncurrency", "waehrung", "währung", "wahrung", "waers", "devise", "moneda", "divisa", "valuta"},
}

func squash(s string) string {
	s = strings.ToLower(strings.TrimSpace(s))
	return strings.NewReplacer(" ", "", "_", "", "-", "", ".", "", "/", "").Replace(s)
}

// Suggest proposes an original column for each canonical column that has a
// likely candidate among names, best first. A name maps itself when it is
// already canonical. Debit and credit columns are proposed together.
func Suggest(names []string) (Mapping, map[string][]string) {
	m := Mapping{Columns: map[string]string{}}
	cands := map[string][]string{}
	used := map[string]bool{}
	// exact canonical names first
	for _, n := range names {
		k := strings.ToLower(strings.TrimSpace(n))
		if IsCanonical(k) && m.Columns[k] == "" {
			m.Columns[k] = n
			used[n] = true
		}
	}
	for _, c := range Canonical {
		for _, h := range hints[c] {
			for _, n := range names {
				if squash(n) == h {
					cands[c] = appendUnique(cands[c], n)
				}
			}
		}
		// looser: the hint contained in the name
		for _, n := range names {
			sq := squash(n)
			for _, h := range hints[c] {
				if len(h) >= 4 && !exactHint[h] && strings.Contains(sq, h) {
					cands[c] = appendUnique(cands[c], n)
				}
			}
		}
		if m.Columns[c] == "" {
			for _, n := range cands[c] {
				if !used[n] {
					m.Columns[c] = n
					used[n] = true
					break
				}
			}
		}
	}
	if m.Columns["amount"] == "" {
		var debit, credit string
		for _, n := range names {
			sq := squash(n)
			if debit == "" && (sq == "debit" || sq == "dr" || strings.HasPrefix(sq, "debit")) {
				debit = n
			}
			if credit == "" && (sq == "credit" || sq == "cr" || strings.HasPrefix(sq, "credit")) {
				credit = n
			}
		}
		if debit != "" && credit != "" {
			m.Debit, m.Credit = debit, credit
		}
	}
	for c, v := range m.Columns {
		if v == "" {
			delete(m.Columns, c)
		}
	}
	return m, cands
}

func appendUnique(list []string, s string) []string {
	for _, x := range list {
		if x == s {
			return list
		}
	}
	return append(list, s)
}

// Resolve builds the mapping for a file from its column names and the
// user's explicit choices (canonical -> original, debit, credit). Explicit
// choices win; canonical names map themselves. It fails when the amount
// cannot be found, naming the file and suggesting columns.
func Resolve(file string, names []string, explicit map[string]string, debit, credit string) (Mapping, error) {
	has := map[string]string{} // lower name -> actual name
	for _, n := range names {
		has[strings.ToLower(n)] = n
	}
	find := func(what, col string) (string, error) {
		if n, ok := has[strings.ToLower(col)]; ok {
			return n, nil
		}
		return "", fmt.Errorf("%s: no column %q for %s; the file has: %s", file, col, what, strings.Join(names, ", "))
	}
	m := Mapping{Columns: map[string]string{}}
	for c, col := range explicit {
		if !IsCanonical(c) {
			return m, fmt.Errorf("--map %s=%s: %q is not a canonical column (use one of %s)", c, col, c, strings.Join(Canonical, ", "))
		}
		n, err := find(c, col)
		if err != nil {
			return m, err
		}
		m.Columns[c] = n
	}
	if (debit == "") != (credit == "") {
		return m, fmt.Errorf("%s: --debit and --credit go together (amount = debit - credit)", file)
	}
	if debit != "" {
		if _, ok := explicit["amount"]; ok {
			return m, fmt.Errorf("%s: give either --map amount=... or --debit/--credit, not both", file)
		}
		var err error
		if m.Debit, err = find("debit", debit); err != nil {
			return m, err
		}
		if m.Credit, err = find("credit", credit); err != nil {
			return m, err
		}
	}
	taken := map[string]bool{}
	for _, n := range m.Columns {
		taken[strings.ToLower(n)] = true
	}
	taken[strings.ToLower(m.Debit)] = true
	taken[strings.ToLower(m.Credit)] = true
	for _, c := range Canonical {
		if _, done := m.Columns[c]; done {
			continue
		}
		if c == "amount" && m.Debit != "" {
			continue
		}
		if n, ok := has[c]; ok && !taken[c] {
			m.Columns[c] = n
			taken[c] = true
		}
	}
	if m.Columns["amount"] == "" && m.Debit == "" {
		sug, cands := Suggest(names)
		hint := ""
		switch {
		case len(cands["amount"]) > 0:
			hint = fmt.Sprintf("; likely: --map amount=%q", cands["amount"][0])
		case sug.Debit != "":
			hint = fmt.Sprintf("; likely: --debit %q --credit %q", sug.Debit, sug.Credit)
		}
		return m, fmt.Errorf("%s: no amount column (columns: %s)%s", file, strings.Join(names, ", "), hint)
	}
	return m, nil
}

// Describe renders the mapping as "canonical<-original" pairs, sorted.
func (m Mapping) Describe() string {
	var parts []string
	for c, n := range m.Columns {
		parts = append(parts, c+"<-"+n)
	}
	sort.Strings(parts)
	if m.Debit != "" {
		parts = append(parts, "amount<-"+m.Debit+" - "+m.Credit)
	}
	if m.CurrencyFromMarkers {
		parts = append(parts, "currency<-the amounts' currency markers")
	}
	return strings.Join(parts, ", ")
}
