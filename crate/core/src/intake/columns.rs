//! Column roles guessed from header words (English, German, French, Dutch, Spanish, Italian,
//! Portuguese, Danish/Norwegian, Swedish, Finnish, Polish) and from content. The word lists
//! are our own, from the everyday vocabulary of bookkeeping exports (common practice, no source).

/// Fold a header or cell to lower-case ASCII letters and digits: accents dropped (é -> e,
/// ü -> u, ø -> o, å -> a, ß -> ss), every other character becomes a space, runs of spaces
/// folded.
pub fn fold(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    let mut space = true;
    for c in s.chars() {
        let c = c.to_lowercase().next().unwrap_or(c);
        let rep: &str = match c {
            'a'..='z' | '0'..='9' => {
                out.push(c);
                space = false;
                continue;
            }
            'à' | 'á' | 'â' | 'ã' | 'ä' | 'å' | 'ą' => "a",
            'æ' => "ae",
            'ç' | 'č' | 'ć' => "c",
            'è' | 'é' | 'ê' | 'ë' | 'ę' | 'ě' => "e",
            'ì' | 'í' | 'î' | 'ï' => "i",
            'ñ' | 'ń' => "n",
            'ò' | 'ó' | 'ô' | 'õ' | 'ö' | 'ø' | 'º' | '°' => "o",
            'ù' | 'ú' | 'û' | 'ü' | 'ů' => "u",
            'ý' | 'ÿ' => "y",
            'ß' => "ss",
            'ł' => "l",
            'ś' | 'š' => "s",
            'ź' | 'ż' | 'ž' => "z",
            'ř' => "r",
            '#' => " no ",
            _ => {
                if !space {
                    out.push(' ');
                    space = true;
                }
                continue;
            }
        };
        out.push_str(rep);
        space = rep.ends_with(' ');
    }
    while out.ends_with(' ') {
        out.pop();
    }
    out
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Role {
    Supplier,
    Amount,
    Date,
    Invoice,
}

const SUPPLIER: &[&str] = &[
    "supplier", "vendor", "creditor", "payee", "beneficiary", "merchant", "counterparty",
    "lieferant", "kreditor", "glaubiger", "zahlungsempfanger", "empfanger", "fournisseur",
    "creancier", "beneficiaire", "leverancier", "crediteur", "begunstigde", "proveedor",
    "acreedor", "beneficiario", "fornitore", "creditore", "fornecedor", "credor", "leverandor",
    "leverantor", "kreditor", "toimittaja", "myyja", "dostawca", "kontrahent", "wierzyciel",
];
const SUPPLIER_WEAK: &[&str] = &[
    "name", "company", "partner", "razon social", "ragione sociale", "nome", "nom", "naam",
    "navn", "namn", "nimi", "firma", "societe", "bedrijf", "empresa", "azienda", "account name",
];
const ID_WORDS: &[&str] = &[
    "no", "nr", "number", "nummer", "numero", "num", "id", "code", "codigo", "codice", "konto",
    "account", "nro", "n", "nb", "ref", "vat", "iban", "bic",
];
const AMOUNT: &[&str] = &[
    "amount", "betrag", "montant", "bedrag", "importe", "importo", "valor", "valore", "belop",
    "belopp", "maara", "kwota", "summe", "summa", "gross", "brutto", "ttc", "total", "value",
    "invoice total", "sum", "wert", "somme", "totaal", "totale", "monto",
];
const AMOUNT_BONUS: &[&str] = &["gross", "brutto", "ttc", "total", "totaal", "totale", "inkl", "incl"];
const AMOUNT_PENALTY: &[&str] = &[
    "net", "netto", "ht", "vat", "tax", "mwst", "ust", "tva", "iva", "btw", "moms", "mva",
    "alv", "steuer", "currency", "wahrung", "devise", "moneda", "valuta", "valute", "count",
    "anzahl", "qty", "quantity", "menge", "rate", "kurs", "percent", "prozent", "discount",
    "skonto", "open", "offen", "balance", "saldo", "paid", "bezahlt",
];
const DATE: &[&str] = &[
    "date", "datum", "fecha", "data", "dato", "paivamaara", "pvm", "datum", "day", "tag",
];
const DATE_BONUS: &[&str] = &[
    "invoice", "rechnung", "rechnungs", "beleg", "facture", "factuur", "factura", "fattura",
    "fatura", "faktura", "document", "dokument", "lasku", "doc",
];
const DATE_PENALTY: &[&str] = &[
    "due", "fallig", "falligkeit", "echeance", "vencimiento", "scadenza", "vervaldatum",
    "vervaldag", "forfall", "forfallo", "erapaiva", "payment", "zahlung", "paid", "bezahlt",
    "entry", "created", "erfasst", "modified", "geandert",
];
const DOC_WORDS: &[&str] = &[
    "invoice", "rechnung", "rechnungs", "beleg", "facture", "factuur", "factura", "fattura",
    "fatura", "faktura", "document", "dokument", "voucher", "reference", "referenz",
    "referentie", "referencia", "riferimento", "bill", "lasku", "ref", "doc", "faktury",
];
const NUM_WORDS: &[&str] = &["no", "nr", "number", "nummer", "numero", "num", "n", "id", "nro", "nb"];

fn has_word(f: &str, w: &str) -> bool {
    // Whole-word match or German/Nordic compound (word at the start or end of a token).
    if w.contains(' ') {
        return f.contains(w);
    }
    f.split(' ').any(|t| t == w || (w.len() >= 4 && (t.starts_with(w) || t.ends_with(w))))
}

fn any(f: &str, ws: &[&str]) -> bool {
    ws.iter().any(|w| has_word(f, w))
}

/// Compound endings like "lieferantennr", "belegnr", "rechnungsnummer", "factuurnr".
fn ends_with_id(f: &str) -> bool {
    f.split(' ').any(|t| {
        t.len() > 4 && ["nr", "nummer", "nummer", "no", "id", "numero"].iter().any(|e| t.ends_with(e) && !t.ends_with("ano"))
    })
}

/// Score of a folded header for a role (0: does not fit).
pub fn score(f: &str, role: Role) -> i32 {
    if f.is_empty() {
        return 0;
    }
    match role {
        Role::Supplier => {
            let id = any(f, ID_WORDS) || ends_with_id(f);
            if any(f, SUPPLIER) {
                if id { 0 } else { 10 }
            } else if any(f, SUPPLIER_WEAK) && !id {
                4
            } else {
                0
            }
        }
        Role::Amount => {
            if !any(f, AMOUNT) {
                return 0;
            }
            let mut s = 10;
            if any(f, AMOUNT_BONUS) {
                s += 3;
            }
            if any(f, AMOUNT_PENALTY) {
                s -= 6;
            }
            if any(f, DATE) || any(f, NUM_WORDS) || ends_with_id(f) {
                s -= 8;
            }
            s.max(0)
        }
        Role::Date => {
            if !any(f, DATE) {
                return 0;
            }
            let mut s = 10;
            if any(f, DATE_BONUS) {
                s += 3;
            }
            if any(f, DATE_PENALTY) {
                s -= 5;
            }
            s
        }
        Role::Invoice => {
            if any(f, DATE) || any(f, AMOUNT) || any(f, SUPPLIER) {
                return 0;
            }
            let doc = any(f, DOC_WORDS);
            let num = any(f, NUM_WORDS) || ends_with_id(f);
            match (doc, num) {
                (true, true) => 10,
                (true, false) => 6,
                _ => 0,
            }
        }
    }
}

/// Words that mark a totals or subtotal line, in the languages above.
const TOTAL_WORDS: &[&str] = &[
    "total", "totals", "subtotal", "sub total", "grand total", "sum", "summe", "gesamt",
    "gesamtsumme", "zwischensumme", "endsumme", "gesamtbetrag", "insgesamt", "total general",
    "sous total", "somme", "totaal", "subtotaal", "eindtotaal", "totale", "subtotale",
    "totale generale", "somma", "suma", "total general", "soma", "total geral", "summa",
    "i alt", "ialt", "totalt", "sum totalt", "yhteensa", "razem", "suma calkowita",
    "overall total", "report total",
];

/// First three lower-case letters of every totals word: a cheap filter before folding a cell.
pub fn total_prefixes() -> Vec<[u8; 3]> {
    let mut v: Vec<[u8; 3]> = TOTAL_WORDS.iter().map(|w| {
        let b = w.as_bytes();
        [b[0], b[1], b[2]]
    }).collect();
    // Accented capitals fold later; the filter only sees raw bytes, so also allow the
    // upper-case-insensitive raw forms of words whose first letters are ASCII (all are).
    v.sort();
    v.dedup();
    v
}

/// Whether a folded first cell reads as a totals marker: the word alone, or the word followed
/// by a qualifier (`Total 2024`, `Summe Januar`). `strict`: only the word alone (with ':').
pub fn is_total_word(f: &str, strict: bool) -> bool {
    TOTAL_WORDS.iter().any(|w| {
        f == *w || (!strict && f.starts_with(w) && f.as_bytes().get(w.len()) == Some(&b' '))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn best(headers: &[&str], role: Role) -> Option<usize> {
        let mut b = None;
        let mut bs = 0;
        for (i, h) in headers.iter().enumerate() {
            let s = score(&fold(h), role);
            if s > bs {
                bs = s;
                b = Some(i);
            }
        }
        b
    }

    #[test]
    fn multilingual_headers() {
        let de = ["Belegnummer", "Belegdatum", "Kreditorennummer", "Lieferant", "Nettobetrag", "Bruttobetrag", "Währung"];
        assert_eq!(best(&de, Role::Supplier), Some(3));
        assert_eq!(best(&de, Role::Amount), Some(5));
        assert_eq!(best(&de, Role::Date), Some(1));
        assert_eq!(best(&de, Role::Invoice), Some(0));
        let fr = ["N° facture", "Date facture", "Fournisseur", "Montant HT", "Montant TTC"];
        assert_eq!(best(&fr, Role::Invoice), Some(0));
        assert_eq!(best(&fr, Role::Date), Some(1));
        assert_eq!(best(&fr, Role::Supplier), Some(2));
        assert_eq!(best(&fr, Role::Amount), Some(4));
        let nl = ["Factuurnummer", "Factuurdatum", "Vervaldatum", "Leverancier", "Bedrag"];
        assert_eq!(best(&nl, Role::Invoice), Some(0));
        assert_eq!(best(&nl, Role::Date), Some(1));
        assert_eq!(best(&nl, Role::Supplier), Some(3));
        assert_eq!(best(&nl, Role::Amount), Some(4));
        let es = ["Proveedor", "Nº factura", "Fecha", "Importe"];
        assert_eq!((best(&es, Role::Supplier), best(&es, Role::Invoice), best(&es, Role::Date), best(&es, Role::Amount)), (Some(0), Some(1), Some(2), Some(3)));
        let it = ["Fornitore", "Numero fattura", "Data", "Importo"];
        assert_eq!((best(&it, Role::Supplier), best(&it, Role::Invoice), best(&it, Role::Date), best(&it, Role::Amount)), (Some(0), Some(1), Some(2), Some(3)));
        let pt = ["Fornecedor", "Número da fatura", "Data", "Valor"];
        assert_eq!((best(&pt, Role::Supplier), best(&pt, Role::Invoice), best(&pt, Role::Date), best(&pt, Role::Amount)), (Some(0), Some(1), Some(2), Some(3)));
        let no = ["Leverandør", "Fakturanr", "Dato", "Beløp"];
        assert_eq!((best(&no, Role::Supplier), best(&no, Role::Invoice), best(&no, Role::Date), best(&no, Role::Amount)), (Some(0), Some(1), Some(2), Some(3)));
        let sv = ["Leverantör", "Fakturanummer", "Datum", "Belopp"];
        assert_eq!((best(&sv, Role::Supplier), best(&sv, Role::Invoice), best(&sv, Role::Date), best(&sv, Role::Amount)), (Some(0), Some(1), Some(2), Some(3)));
        let en = ["Vendor ID", "Vendor Name", "Invoice No.", "Invoice Date", "Due Date", "VAT", "Gross Amount"];
        assert_eq!((best(&en, Role::Supplier), best(&en, Role::Invoice), best(&en, Role::Date), best(&en, Role::Amount)), (Some(1), Some(2), Some(3), Some(6)));
    }

    #[test]
    fn totals() {
        assert!(is_total_word(&fold("Total:"), true));
        assert!(is_total_word(&fold("Summe Januar"), false));
        assert!(is_total_word(&fold("Sous-total"), true));
        assert!(!is_total_word(&fold("Total Logistics Ltd"), true));
        assert!(!is_total_word(&fold("Totalfix GmbH"), false));
    }
}
