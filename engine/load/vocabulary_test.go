package load

import (
	"reflect"
	"strings"
	"testing"
)

// TestHeaderVocabulary maps header rows of ledger exports in each language
// to the canonical columns expected of them (worked out by hand).
func TestHeaderVocabulary(t *testing.T) {
	cases := []struct {
		lang          string
		header        string
		want          map[string]string
		debit, credit string
	}{
		{"English", "Posting Date,Journal No,GL Account,Description,Amount,Company Code,Entered By,Vendor,Line No,Source",
			map[string]string{"posted": "Posting Date", "doc_id": "Journal No", "account": "GL Account", "descr": "Description", "amount": "Amount",
				"entity": "Company Code", "user_id": "Entered By", "counterparty": "Vendor", "line_id": "Line No", "source": "Source"}, "", ""},
		{"German", "Buchungsdatum;Belegnummer;Sachkonto;Buchungstext;Betrag;Buchungskreis;Benutzer;Kreditor;Belegposition;Belegart",
			map[string]string{"posted": "Buchungsdatum", "doc_id": "Belegnummer", "account": "Sachkonto", "descr": "Buchungstext", "amount": "Betrag",
				"entity": "Buchungskreis", "user_id": "Benutzer", "counterparty": "Kreditor", "line_id": "Belegposition", "source": "Belegart"}, "", ""},
		{"German debit/credit", "Belegdatum;Belegnr;Konto;Gesellschaft;Soll;Haben",
			map[string]string{"posted": "Belegdatum", "doc_id": "Belegnr", "account": "Konto", "entity": "Gesellschaft"}, "Soll", "Haben"},
		{"French", "Date comptable;Numéro de pièce;Compte;Libellé;Débit;Crédit;Société;Utilisateur;Fournisseur",
			map[string]string{"posted": "Date comptable", "doc_id": "Numéro de pièce", "account": "Compte", "descr": "Libellé", "entity": "Société",
				"user_id": "Utilisateur", "counterparty": "Fournisseur"}, "Débit", "Crédit"},
		{"French capitals, no accents", "DATE COMPTABLE;NUMERO DE PIECE;COMPTE;LIBELLE;MONTANT;SOCIETE",
			map[string]string{"posted": "DATE COMPTABLE", "doc_id": "NUMERO DE PIECE", "account": "COMPTE", "descr": "LIBELLE", "amount": "MONTANT", "entity": "SOCIETE"}, "", ""},
		{"Spanish", "Fecha contable\tAsiento\tCuenta\tConcepto\tDebe\tHaber\tSociedad\tUsuario\tProveedor",
			map[string]string{"posted": "Fecha contable", "doc_id": "Asiento", "account": "Cuenta", "descr": "Concepto", "entity": "Sociedad",
				"user_id": "Usuario", "counterparty": "Proveedor"}, "Debe", "Haber"},
		{"Italian", "Data registrazione;Numero registrazione;Conto;Descrizione;Dare;Avere;Società;Utente",
			map[string]string{"posted": "Data registrazione", "doc_id": "Numero registrazione", "account": "Conto", "descr": "Descrizione",
				"entity": "Società", "user_id": "Utente"}, "Dare", "Avere"},
		{"Italian amount", "Data;Protocollo;Conto;Importo;Fornitore",
			map[string]string{"posted": "Data", "doc_id": "Protocollo", "account": "Conto", "amount": "Importo", "counterparty": "Fornitore"}, "", ""},
		{"Dutch", "Boekdatum;Boekstuknummer;Grootboekrekening;Omschrijving;Bedrag;Gebruiker;Leverancier;Dagboek",
			map[string]string{"posted": "Boekdatum", "doc_id": "Boekstuknummer", "account": "Grootboekrekening", "descr": "Omschrijving",
				"amount": "Bedrag", "user_id": "Gebruiker", "counterparty": "Leverancier", "source": "Dagboek"}, "", ""},
		{"Dutch debit/credit", "Boekingsdatum;Grootboek;Debet;Credit", map[string]string{"posted": "Boekingsdatum", "account": "Grootboek"}, "Debet", "Credit"},
		{"Portuguese", "Data do lançamento;Lançamento;Conta;Histórico;Valor;Empresa;Usuário",
			map[string]string{"posted": "Data do lançamento", "doc_id": "Lançamento", "account": "Conta", "descr": "Histórico", "amount": "Valor",
				"entity": "Empresa", "user_id": "Usuário"}, "", ""},
		{"Portuguese debit/credit", "Data;Documento;Conta;Débito;Crédito",
			map[string]string{"posted": "Data", "doc_id": "Documento", "account": "Conta"}, "Débito", "Crédito"},
		{"Swedish", "Bokföringsdatum;Verifikationsnummer;Konto;Beskrivning;Belopp;Användare;Bolag;Leverantör",
			map[string]string{"posted": "Bokföringsdatum", "doc_id": "Verifikationsnummer", "account": "Konto", "descr": "Beskrivning",
				"amount": "Belopp", "user_id": "Användare", "entity": "Bolag", "counterparty": "Leverantör"}, "", ""},
		{"Danish", "Bogføringsdato;Bilagsnummer;Kontonummer;Tekst;Beløb;Bruger;Selskab",
			map[string]string{"posted": "Bogføringsdato", "doc_id": "Bilagsnummer", "account": "Kontonummer", "descr": "Tekst",
				"amount": "Beløb", "user_id": "Bruger", "entity": "Selskab"}, "", ""},
		{"Norwegian", "Bokføringsdato;Bilagsnr;Konto;Beskrivelse;Beløp;Bruker",
			map[string]string{"posted": "Bokføringsdato", "doc_id": "Bilagsnr", "account": "Konto", "descr": "Beskrivelse", "amount": "Beløp", "user_id": "Bruker"}, "", ""},
		{"Finnish", "Kirjauspäivä;Tositenumero;Tili;Selite;Summa;Käyttäjä",
			map[string]string{"posted": "Kirjauspäivä", "doc_id": "Tositenumero", "account": "Tili", "descr": "Selite", "amount": "Summa", "user_id": "Käyttäjä"}, "", ""},
		{"German compounds", "Rechnungsbetrag;Buchungsdatum;Belegdatum",
			map[string]string{"amount": "Rechnungsbetrag", "posted": "Buchungsdatum"}, "", ""},
	}
	for _, c := range cases {
		sep := ";"
		for _, d := range []string{"\t", ","} {
			if strings.Contains(c.header, d) {
				sep = d
			}
		}
		m, _, why, _ := SuggestWhy(strings.Split(c.header, sep))
		if !reflect.DeepEqual(m.Columns, c.want) || m.Debit != c.debit || m.Credit != c.credit {
			t.Errorf("%s: got %v debit %q credit %q\nwant %v debit %q credit %q", c.lang, m.Columns, m.Debit, m.Credit, c.want, c.debit, c.credit)
		}
		for canon, col := range c.want {
			if why[canon].Column != col || why[canon].Why == "" {
				t.Errorf("%s: %s: reason %+v", c.lang, canon, why[canon])
			}
		}
	}
}

func TestHeaderReasons(t *testing.T) {
	_, _, why, amb := SuggestWhy([]string{"amount", "Buchungsdatum", "N° Pièce", "Rechnungs-Betrag (EUR)"})
	want := map[string]Match{
		"amount": {Column: "amount", Rule: "canonical", Why: "exact canonical name"},
		"posted": {Column: "Buchungsdatum", Rule: "vocabulary", Why: `vocabulary word "Buchungsdatum" (German)`},
		"doc_id": {Column: "N° Pièce", Rule: "vocabulary", Why: `vocabulary word "N° pièce" (French)`},
	}
	for c, w := range want {
		if !reflect.DeepEqual(why[c], w) {
			t.Errorf("%s: %+v, want %+v", c, why[c], w)
		}
	}
	if len(amb) != 0 {
		t.Errorf("ambiguities %q", amb)
	}
	// a word shared by languages names them all
	_, _, why, _ = SuggestWhy([]string{"Valor"})
	if why["amount"].Why != `vocabulary word "Valor" (Spanish, Portuguese)` {
		t.Errorf("Valor: %+v", why["amount"])
	}
}

// TestHeaderAmbiguity: two equally good amount columns, or an amount
// beside a debit and credit pair, are reported, not decided in silence.
func TestHeaderAmbiguity(t *testing.T) {
	for _, c := range []struct {
		header []string
		amount string
		report []string
	}{
		{[]string{"Datum", "Betrag", "Buchungsbetrag"}, "Betrag", []string{`amount: "Betrag" and also "Buchungsbetrag"`}},
		{[]string{"Date", "Transaction Amount", "Line Amount"}, "Transaction Amount", []string{`amount: "Transaction Amount" and also "Line Amount"`}},
		{[]string{"Datum", "Betrag", "Soll", "Haben"}, "Betrag", []string{`amount: "Betrag", or the debit and credit columns "Soll" and "Haben"`, "--debit Soll --credit Haben"}},
		{[]string{"Amount EUR", "Amount USD"}, "Amount EUR", []string{`amount: "Amount EUR" and also "Amount USD" hold a word for it`}},
	} {
		m, _, why, amb := SuggestWhy(c.header)
		if m.Columns["amount"] != c.amount {
			t.Errorf("%v: amount %q, want %q", c.header, m.Columns["amount"], c.amount)
		}
		all := strings.Join(amb, "\n")
		for _, r := range c.report {
			if !strings.Contains(all, r) {
				t.Errorf("%v: ambiguities %q lack %q", c.header, amb, r)
			}
		}
		if len(amb) == 0 {
			t.Errorf("%v: no ambiguity reported (reasons %+v)", c.header, why)
		}
	}
}

// TestVocabularyConsistent: no folded word names two columns, and folding
// takes accents, case, spaces and punctuation off.
func TestVocabularyConsistent(t *testing.T) {
	seen := map[string]string{}
	for _, e := range vocabulary {
		for _, w := range e.words {
			k := squash(w)
			if old, ok := seen[k]; ok && old != e.canon {
				t.Errorf("%q (%s) names %s and %s", w, e.lang, old, e.canon)
			}
			seen[k] = e.canon
			if !IsCanonical(e.canon) && e.canon != "debit" && e.canon != "credit" {
				t.Errorf("%q: unknown column %s", w, e.canon)
			}
		}
	}
	for c, hs := range hints {
		for _, h := range hs {
			if old, ok := seen[h]; ok && old != c {
				t.Errorf("hint %q names %s, the vocabulary %s", h, c, old)
			}
		}
	}
	for in, want := range map[string]string{"Numéro de pièce": "numerodepiece", "BELØB": "belob", "Straße": "strasse", "Kirjauspäivä": "kirjauspaiva", " N° Pièce ": "npiece", "Lançamento": "lancamento"} {
		if got := squash(in); got != want {
			t.Errorf("squash(%q) = %q, want %q", in, got, want)
		}
	}
}
