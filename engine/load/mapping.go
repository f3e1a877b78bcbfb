package load

import (
	"fmt"
	"sort"
	"strings"
	"unicode"
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

// squash folds a header name for matching: lower case, accents off
// (fold), everything but letters and digits removed.
func squash(s string) string {
	var b strings.Builder
	for _, r := range fold(strings.TrimSpace(s)) {
		if unicode.IsLetter(r) || unicode.IsDigit(r) {
			b.WriteRune(r)
		}
	}
	return b.String()
}

// Match says which header a canonical column was given and why.
type Match struct {
	Column string   `json:"column"`
	Rule   string   `json:"rule"` // canonical, vocabulary, contains, map
	Why    string   `json:"why"`
	Others []string `json:"also_matched,omitempty"` // equally good headers not taken
}

// Suggest proposes an original column for each canonical column that has a
// likely candidate among names, best first. A name maps itself when it is
// already canonical. Debit and credit columns are proposed together.
func Suggest(names []string) (Mapping, map[string][]string) {
	m, cands, _, _ := SuggestWhy(names)
	return m, cands
}

// SuggestWhy is Suggest with the reason of every choice (keyed by the
// canonical column, or "debit" and "credit") and the ambiguities met: two
// or more headers equally good for one column, or an amount column beside
// a debit and credit pair. An ambiguity is decided (the vocabulary's
// order, the amount before debit and credit) and reported, never passed
// over in silence.
//
// Headers are matched in three steps, each on the columns left by the
// one before: a canonical name; a word of the vocabulary (hints, and
// vocabulary.go in the languages of ledger exports) equal to the header
// folded (case, accents, spaces and punctuation ignored), specific words
// before generic ones such as "date" or "value"; a vocabulary word of four
// letters or more at the end of the header (compounds such as
// "Rechnungsbetrag") and then anywhere in it.
func SuggestWhy(names []string) (Mapping, map[string][]string, map[string]Match, []string) {
	m := Mapping{Columns: map[string]string{}}
	cands := map[string][]string{}
	why := map[string]Match{}
	var ambiguous []string
	used := map[string]bool{}
	// exact canonical names first
	for _, n := range names {
		k := strings.ToLower(strings.TrimSpace(n))
		if IsCanonical(k) && m.Columns[k] == "" {
			m.Columns[k] = n
			used[n] = true
			why[k] = Match{Column: n, Rule: "canonical", Why: "exact canonical name"}
		}
	}
	// exact vocabulary words, by tier: 0 specific, 1 generic
	type hit struct {
		name, word, langs string
		tier, rank        int
	}
	exact := map[string][]hit{} // canonical (or debit/credit) -> hits
	for _, n := range names {
		k := squash(n)
		if k == "" {
			continue
		}
		if w, ok := vocab[k]; ok {
			t := 0
			if generic[k] {
				t = 1
			}
			exact[w.canon] = append(exact[w.canon], hit{n, w.word, w.langs, t, w.rank})
			continue
		}
		for c, hs := range hints {
			for i, h := range hs {
				if h == k {
					t := 0
					if generic[k] {
						t = 1
					}
					exact[c] = append(exact[c], hit{n, h, "English", t, len(vocabulary) + i})
				}
			}
		}
	}
	for c := range exact {
		hs := exact[c]
		sort.SliceStable(hs, func(i, j int) bool {
			if hs[i].tier != hs[j].tier {
				return hs[i].tier < hs[j].tier
			}
			return hs[i].rank < hs[j].rank
		})
		for _, h := range hs {
			cands[c] = appendUnique(cands[c], h.name)
		}
	}
	take := func(c string, hs []hit) {
		var free []hit
		for _, h := range hs {
			if !used[h.name] {
				free = append(free, h)
			}
		}
		if len(free) == 0 {
			return
		}
		best := free[0]
		mt := Match{Column: best.name, Rule: "vocabulary", Why: fmt.Sprintf("vocabulary word %q (%s)", best.word, best.langs)}
		for _, h := range free[1:] {
			if h.tier == best.tier {
				mt.Others = append(mt.Others, h.name)
			}
		}
		if len(mt.Others) > 0 {
			ambiguous = append(ambiguous, fmt.Sprintf("%s: %q and also %s match equally well; took %q (the vocabulary's first); give --map %s=COLUMN for another",
				c, best.name, quoteList(mt.Others), best.name, c))
		}
		used[best.name] = true
		why[c] = mt
		switch c {
		case "debit":
			m.Debit = best.name
		case "credit":
			m.Credit = best.name
		default:
			m.Columns[c] = best.name
		}
	}
	for _, c := range Canonical {
		if m.Columns[c] == "" {
			take(c, exact[c])
		}
	}
	// debit and credit, when both are there
	if len(exact["debit"]) > 0 && len(exact["credit"]) > 0 {
		if m.Columns["amount"] == "" {
			take("debit", exact["debit"])
			take("credit", exact["credit"])
			if m.Debit == "" || m.Credit == "" {
				m.Debit, m.Credit = "", ""
				delete(why, "debit")
				delete(why, "credit")
			}
		} else {
			ambiguous = append(ambiguous, fmt.Sprintf("amount: %q, or the debit and credit columns %q and %q; took %q; give --debit %s --credit %s for the pair",
				m.Columns["amount"], exact["debit"][0].name, exact["credit"][0].name, m.Columns["amount"], shellQuote(exact["debit"][0].name), shellQuote(exact["credit"][0].name)))
		}
	}
	// looser: a vocabulary word of four letters or more at the end of the
	// header, then anywhere in it
	words := map[string][]string{}
	for k, w := range vocab {
		words[w.canon] = append(words[w.canon], k)
	}
	for c, hs := range hints {
		words[c] = append(words[c], hs...)
	}
	for c := range words {
		sort.Strings(words[c])
	}
	// the column a header names by its last word, if any (the head of a
	// compound: "Belegdatum" is a date, not a document number)
	head := map[string]string{}
	for _, n := range names {
		sq, best := squash(n), 0
		for c, ws := range words {
			for _, h := range ws {
				if len(h) >= 4 && len(h) > best && strings.HasSuffix(sq, h) {
					head[n], best = c, len(h)
				}
			}
		}
	}
	for _, c := range Canonical {
		var suffix, contains []string
		found := map[string]string{}
		for _, n := range names {
			sq := squash(n)
			if hc, ok := head[n]; ok && hc != c {
				continue
			}
			for _, h := range words[c] {
				if len(h) < 4 || exactHint[h] || !strings.Contains(sq, h) || sq == h {
					continue
				}
				if _, ok := found[n]; !ok || strings.HasSuffix(sq, h) {
					found[n] = h
				}
			}
			if h, ok := found[n]; ok {
				if strings.HasSuffix(sq, h) {
					suffix = append(suffix, n)
				} else {
					contains = append(contains, n)
				}
			}
		}
		for _, n := range append(suffix, contains...) {
			cands[c] = appendUnique(cands[c], n)
		}
		if m.Columns[c] != "" || c == "amount" && m.Debit != "" {
			continue
		}
		for _, group := range [][]string{suffix, contains} {
			var free []string
			for _, n := range group {
				if !used[n] {
					free = append(free, n)
				}
			}
			if len(free) == 0 {
				continue
			}
			n := free[0]
			h := found[n]
			w := vocab[h]
			lang := w.langs
			if lang == "" {
				lang = "English"
			}
			mt := Match{Column: n, Rule: "contains", Why: fmt.Sprintf("holds the vocabulary word %q (%s)", h, lang)}
			if w.word != "" {
				mt.Why = fmt.Sprintf("holds the vocabulary word %q (%s)", w.word, lang)
			}
			mt.Others = free[1:]
			if len(mt.Others) > 0 {
				ambiguous = append(ambiguous, fmt.Sprintf("%s: %q and also %s hold a word for it; took %q; give --map %s=COLUMN for another",
					c, n, quoteList(mt.Others), n, c))
			}
			m.Columns[c] = n
			used[n] = true
			why[c] = mt
			break
		}
	}
	if m.Columns["amount"] == "" && m.Debit == "" {
		// the English prefixes of old: Debit LC, Credit LC
		var debit, credit string
		for _, n := range names {
			sq := squash(n)
			if used[n] || vocab[sq].canon == "counterparty" || sq == "debitor" || sq == "creditor" {
				continue
			}
			if debit == "" && strings.HasPrefix(sq, "debit") {
				debit = n
			}
			if credit == "" && strings.HasPrefix(sq, "credit") {
				credit = n
			}
		}
		if debit != "" && credit != "" {
			m.Debit, m.Credit = debit, credit
			why["debit"] = Match{Column: debit, Rule: "contains", Why: `starts with "debit" (English)`}
			why["credit"] = Match{Column: credit, Rule: "contains", Why: `starts with "credit" (English)`}
		}
	}
	for c, v := range m.Columns {
		if v == "" {
			delete(m.Columns, c)
		}
	}
	return m, cands, why, ambiguous
}

func quoteList(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = fmt.Sprintf("%q", n)
	}
	return strings.Join(q, ", ")
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
		if err := CheckCanonical(c, col); err != nil {
			return m, err
		}
		n, err := find(c, col)
		if err != nil {
			return m, err
		}
		m.Columns[c] = n
	}
	_, amountMapped := explicit["amount"]
	if err := CheckDebitCredit(amountMapped, debit, credit); err != nil {
		return m, fmt.Errorf("%s: %w", file, err)
	}
	if debit != "" {
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
