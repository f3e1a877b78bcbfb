package load

import (
	"strings"
	"unicode"

	"golang.org/x/text/unicode/norm"
)

// The header vocabulary: how ledger exports in the main European languages
// spell the canonical columns, written as they appear in headers (accents
// and all) and matched with case, accents, spaces and punctuation folded
// away. It adds to hints (mapping.go), whose words are English. This list
// is leadline's own.
type vocabEntry struct {
	canon string // a canonical column, or "debit" / "credit"
	lang  string
	words []string
}

var vocabulary = []vocabEntry{
	{"amount", "German", []string{"Betrag", "Buchungsbetrag", "Betrag Hauswährung", "Umsatz", "Wert", "Summe"}},
	{"amount", "French", []string{"Montant", "Montant comptable", "Valeur", "Somme"}},
	{"amount", "Spanish", []string{"Importe", "Monto", "Valor"}},
	{"amount", "Italian", []string{"Importo", "Valore", "Ammontare"}},
	{"amount", "Dutch", []string{"Bedrag", "Waarde"}},
	{"amount", "Portuguese", []string{"Valor", "Montante", "Quantia"}},
	{"amount", "Swedish", []string{"Belopp", "Summa"}},
	{"amount", "Danish", []string{"Beløb"}},
	{"amount", "Norwegian", []string{"Beløp"}},
	{"amount", "Finnish", []string{"Määrä", "Summa"}},
	{"amount", "SAP field name", []string{"WRBTR", "DMBTR"}},

	{"debit", "German", []string{"Soll", "Sollbetrag", "Betrag Soll", "Umsatz Soll"}},
	{"credit", "German", []string{"Haben", "Habenbetrag", "Betrag Haben", "Umsatz Haben"}},
	{"debit", "French", []string{"Débit", "Montant débit"}},
	{"credit", "French", []string{"Crédit", "Montant crédit"}},
	{"debit", "Spanish", []string{"Debe", "Débito", "Importe debe"}},
	{"credit", "Spanish", []string{"Haber", "Crédito", "Importe haber"}},
	{"debit", "Italian", []string{"Dare", "Importo dare"}},
	{"credit", "Italian", []string{"Avere", "Importo avere"}},
	{"debit", "Dutch", []string{"Debet", "Debetbedrag"}},
	{"credit", "Dutch", []string{"Creditbedrag"}},
	{"debit", "Portuguese", []string{"Débito", "Valor débito"}},
	{"credit", "Portuguese", []string{"Crédito", "Valor crédito"}},
	{"debit", "Swedish", []string{"Debet"}},
	{"credit", "Swedish", []string{"Kredit"}},
	{"debit", "English", []string{"Debit", "DR", "Debit amount", "Amount debit"}},
	{"credit", "English", []string{"Credit", "CR", "Credit amount", "Amount credit"}},

	{"entity", "German", []string{"Gesellschaft", "Buchungskreis", "Firma", "Mandant", "Unternehmen"}},
	{"entity", "French", []string{"Société", "Entité", "Entreprise"}},
	{"entity", "Spanish", []string{"Sociedad", "Empresa", "Entidad"}},
	{"entity", "Italian", []string{"Società", "Azienda", "Entità"}},
	{"entity", "Dutch", []string{"Entiteit", "Bedrijf", "Onderneming", "Vennootschap"}},
	{"entity", "Portuguese", []string{"Empresa", "Sociedade", "Entidade"}},
	{"entity", "Swedish", []string{"Bolag", "Företag"}},
	{"entity", "Danish", []string{"Selskab"}},
	{"entity", "Norwegian", []string{"Selskap"}},
	{"entity", "Finnish", []string{"Yritys"}},
	{"entity", "SAP field name", []string{"BUKRS"}},

	{"account", "German", []string{"Sachkonto", "Hauptbuchkonto", "Konto", "Kontonummer", "Kontonr"}},
	{"account", "French", []string{"Compte", "Compte général", "Numéro de compte", "Compte comptable", "N° compte"}},
	{"account", "Spanish", []string{"Cuenta", "Cuenta contable", "Número de cuenta", "Cuenta mayor"}},
	{"account", "Italian", []string{"Conto", "Conto contabile", "Numero conto"}},
	{"account", "Dutch", []string{"Grootboekrekening", "Grootboek", "Rekening", "Rekeningnummer"}},
	{"account", "Portuguese", []string{"Conta", "Conta contábil", "Número da conta"}},
	{"account", "Swedish", []string{"Konto", "Kontonummer"}},
	{"account", "Danish", []string{"Konto", "Kontonummer"}},
	{"account", "Norwegian", []string{"Konto", "Kontonummer"}},
	{"account", "Finnish", []string{"Tili", "Tilinumero"}},
	{"account", "SAP field name", []string{"HKONT", "SAKNR"}},

	{"counterparty", "German", []string{"Geschäftspartner", "Lieferant", "Kunde", "Kreditor", "Debitor"}},
	{"counterparty", "French", []string{"Tiers", "Fournisseur", "Client", "Contrepartie"}},
	{"counterparty", "Spanish", []string{"Tercero", "Proveedor", "Cliente", "Contraparte"}},
	{"counterparty", "Italian", []string{"Fornitore", "Cliente", "Controparte", "Terzo"}},
	{"counterparty", "Dutch", []string{"Leverancier", "Klant", "Relatie", "Tegenpartij", "Crediteur", "Debiteur"}},
	{"counterparty", "Portuguese", []string{"Fornecedor", "Cliente", "Contraparte", "Terceiro"}},
	{"counterparty", "Swedish", []string{"Leverantör", "Kund", "Motpart"}},
	{"counterparty", "Danish", []string{"Leverandør", "Kunde"}},
	{"counterparty", "Norwegian", []string{"Leverandør", "Kunde"}},
	{"counterparty", "Finnish", []string{"Toimittaja", "Asiakas"}},
	{"counterparty", "SAP field name", []string{"LIFNR", "KUNNR"}},

	{"doc_id", "German", []string{"Belegnummer", "Belegnr", "Beleg", "Buchungsnummer"}},
	{"doc_id", "French", []string{"Numéro de pièce", "N° pièce", "Pièce", "Numéro d'écriture", "Écriture", "Numéro écriture"}},
	{"doc_id", "Spanish", []string{"Asiento", "Número de asiento", "Número de documento", "Comprobante"}},
	{"doc_id", "Italian", []string{"Numero registrazione", "Protocollo", "Numero documento"}},
	{"doc_id", "Dutch", []string{"Boekstuk", "Boekstuknummer", "Documentnummer", "Journaalpost"}},
	{"doc_id", "Portuguese", []string{"Lançamento", "Número do lançamento", "Número do documento"}},
	{"doc_id", "Spanish, Italian, Portuguese", []string{"Documento"}},
	{"doc_id", "Swedish", []string{"Verifikation", "Verifikationsnummer", "Verifikat"}},
	{"doc_id", "Danish", []string{"Bilag", "Bilagsnummer", "Bilagsnr"}},
	{"doc_id", "Norwegian", []string{"Bilag", "Bilagsnummer", "Bilagsnr"}},
	{"doc_id", "Finnish", []string{"Tosite", "Tositenumero"}},
	{"doc_id", "SAP field name", []string{"BELNR"}},

	{"line_id", "German", []string{"Position", "Buchungszeile", "Zeile", "Belegposition", "Zeilennummer"}},
	{"line_id", "French", []string{"Ligne", "Numéro de ligne"}},
	{"line_id", "Spanish", []string{"Línea", "Número de línea", "Apunte"}},
	{"line_id", "Italian", []string{"Riga", "Numero riga"}},
	{"line_id", "Dutch", []string{"Regel", "Regelnummer", "Boekingsregel"}},
	{"line_id", "Portuguese", []string{"Linha", "Número da linha"}},
	{"line_id", "Swedish", []string{"Rad", "Radnummer"}},
	{"line_id", "Danish", []string{"Linje", "Linjenummer"}},
	{"line_id", "Norwegian", []string{"Linje", "Linjenummer"}},
	{"line_id", "Finnish", []string{"Rivi", "Rivinumero"}},
	{"line_id", "SAP field name", []string{"BUZEI"}},

	{"posted", "German", []string{"Buchungsdatum", "Buchungstag", "Datum"}},
	{"posted", "French", []string{"Date comptable", "Date de comptabilisation", "Date écriture", "Date d'écriture", "Date pièce"}},
	{"posted", "Spanish", []string{"Fecha contable", "Fecha de contabilización", "Fecha asiento", "Fecha"}},
	{"posted", "Italian", []string{"Data registrazione", "Data di registrazione", "Data contabile"}},
	{"posted", "Dutch", []string{"Boekdatum", "Boekingsdatum"}},
	{"posted", "Portuguese", []string{"Data do lançamento", "Data lançamento", "Data contábil"}},
	{"posted", "Italian, Portuguese", []string{"Data"}},
	{"posted", "Swedish", []string{"Bokföringsdatum", "Datum"}},
	{"posted", "Danish", []string{"Bogføringsdato", "Dato"}},
	{"posted", "Norwegian", []string{"Bokføringsdato", "Dato"}},
	{"posted", "Finnish", []string{"Kirjauspäivä", "Päivämäärä"}},
	{"posted", "SAP field name", []string{"BUDAT"}},

	{"user_id", "German", []string{"Benutzer", "Benutzername", "Erfasser", "Erfasst von"}},
	{"user_id", "French", []string{"Utilisateur", "Saisi par", "Créé par"}},
	{"user_id", "Spanish", []string{"Usuario", "Creado por"}},
	{"user_id", "Italian", []string{"Utente", "Operatore", "Creato da"}},
	{"user_id", "Dutch", []string{"Gebruiker", "Ingevoerd door", "Aangemaakt door"}},
	{"user_id", "Portuguese", []string{"Usuário", "Utilizador", "Criado por"}},
	{"user_id", "Swedish", []string{"Användare", "Registrerad av"}},
	{"user_id", "Danish", []string{"Bruger"}},
	{"user_id", "Norwegian", []string{"Bruker"}},
	{"user_id", "Finnish", []string{"Käyttäjä"}},
	{"user_id", "SAP field name", []string{"USNAM"}},

	{"source", "German", []string{"Belegart", "Buchungsart", "Quelle", "Herkunft"}},
	{"source", "French", []string{"Code journal", "Type de pièce", "Origine"}},
	{"source", "Spanish", []string{"Origen", "Diario", "Tipo de asiento", "Tipo de documento"}},
	{"source", "Italian", []string{"Origine", "Fonte", "Registro", "Tipo documento"}},
	{"source", "Dutch", []string{"Bron", "Dagboek", "Boekingstype"}},
	{"source", "Portuguese", []string{"Origem", "Diário", "Tipo de documento"}},
	{"source", "Swedish", []string{"Källa", "Verifikationsserie", "Serie"}},
	{"source", "Danish", []string{"Kilde"}},
	{"source", "Norwegian", []string{"Kilde"}},
	{"source", "Finnish", []string{"Lähde"}},
	{"source", "SAP field name", []string{"BLART"}},

	{"descr", "German", []string{"Buchungstext", "Text", "Beschreibung", "Bezeichnung", "Verwendungszweck", "Positionstext"}},
	{"descr", "French", []string{"Libellé", "Libellé écriture", "Commentaire"}},
	{"descr", "Spanish", []string{"Concepto", "Descripción", "Texto", "Glosa"}},
	{"descr", "Italian", []string{"Descrizione", "Causale", "Testo"}},
	{"descr", "Dutch", []string{"Omschrijving", "Boekingsomschrijving", "Tekst"}},
	{"descr", "Portuguese", []string{"Descrição", "Histórico", "Texto"}},
	{"descr", "Swedish", []string{"Beskrivning", "Text"}},
	{"descr", "Danish", []string{"Beskrivelse", "Tekst"}},
	{"descr", "Norwegian", []string{"Beskrivelse", "Tekst"}},
	{"descr", "Finnish", []string{"Selite", "Kuvaus"}},
	{"descr", "SAP field name", []string{"SGTXT"}},
}

// vocabWord is one folded word of the vocabulary: the column it names,
// the spelling it was written in and the languages that use it.
type vocabWord struct {
	canon, word, langs string
	rank               int // order in the vocabulary: earlier is more specific
}

// vocab maps a folded header word to its entry; built once.
var vocab = func() map[string]vocabWord {
	m := map[string]vocabWord{}
	for i, e := range vocabulary {
		for _, w := range e.words {
			k := squash(w)
			if old, ok := m[k]; ok {
				if old.canon == e.canon && !strings.Contains(old.langs, e.lang) {
					old.langs += ", " + e.lang
					m[k] = old
				}
				continue
			}
			m[k] = vocabWord{canon: e.canon, word: w, langs: e.lang, rank: i}
		}
	}
	return m
}()

// generic words name a column only when nothing more specific does.
var generic = map[string]bool{
	"date": true, "datum": true, "data": true, "fecha": true, "dato": true,
	"value": true, "wert": true, "valor": true, "valore": true, "waarde": true, "valeur": true,
	"text": true, "texto": true, "tekst": true, "testo": true,
	"sum": true, "summe": true, "somme": true, "summa": true, "total": true, "net": true,
	"reference": true, "ref": true, "item": true, "unit": true, "org": true,
}

// fold lowers s and takes the accents off its letters (é to e, ä to a),
// writing the few letters that do not decompose (ß, æ, ø, œ, ł) as
// their usual plain spellings.
func fold(s string) string {
	var b strings.Builder
	for _, r := range norm.NFD.String(strings.ToLower(s)) {
		switch {
		case unicode.Is(unicode.Mn, r):
		case r == 'ß':
			b.WriteString("ss")
		case r == 'æ':
			b.WriteString("ae")
		case r == 'ø':
			b.WriteByte('o')
		case r == 'œ':
			b.WriteString("oe")
		case r == 'ł':
			b.WriteByte('l')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}
