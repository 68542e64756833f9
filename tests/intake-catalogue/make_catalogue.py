#!/usr/bin/env python3
"""Writes the intake catalogue: awkward or broken ledger files (all data invented) and, beside
each, the expected outcome (`.expect`, format described in crate/core/tests/intake_catalogue.rs).

Expected values are written by hand from the rule each case exercises; money totals are summed
here with Python's `decimal` module from the amounts as a person reads them, independently of
the Rust parser. Run from anywhere: `python3 tests/intake-catalogue/make_catalogue.py`.
"""
import os
import random
from decimal import Decimal

HERE = os.path.dirname(os.path.abspath(__file__))


def D(xs):
    """Exact sum, formatted like Amount's Display (at least two decimals)."""
    s = sum((Decimal(x) for x in xs), Decimal(0))
    t = format(s, "f")
    if "." not in t:
        t += ".00"
    whole, frac = t.split(".")
    frac = frac.rstrip("0")
    while len(frac) < 2:
        frac += "0"
    return f"{whole}.{frac}"


def case(name, data, expect, ext="csv", enc="utf-8", comment=""):
    raw = data if isinstance(data, bytes) else data.encode(enc)
    with open(os.path.join(HERE, f"{name}.{ext}"), "wb") as f:
        f.write(raw)
    lines = [f"# {comment}"] if comment else []
    for k, v in expect:
        lines.append(f"{k}: {v}")
    with open(os.path.join(HERE, f"{name}.expect"), "w", encoding="utf-8") as f:
        f.write("\n".join(lines) + "\n")


BASIC = "Supplier,Invoice No,Invoice Date,Amount\n" \
        "Acme Ltd,A-1,2024-01-05,1234.56\n" \
        "Beta Supplies,B-7,2024-01-06,89.10\n" \
        "Acme Ltd,A-2,2024-01-09,15.00\n"
BASIC_EXPECT = [("read", 3), ("analysed", 3), ("excluded", 0), ("suppliers", 2),
                ("invoices_total", D(["1234.56", "89.10", "15.00"])),
                ("mapping", "supplier=1 amount=4 date=3 invoice=2")]

case("01_basic_point", BASIC, BASIC_EXPECT + [("encoding", "UTF-8"), ("delimiter", ","), ("header_line", 1),
     ("decimal", "point"), ("date_order", "ymd"), ("invoice", "2 1234.56 2024-01-05")],
     comment="plain comma-separated, point decimals, ISO dates (RFC 4180, ISO 8601)")

case("02_utf8_bom", "\ufeff" + BASIC, BASIC_EXPECT + [("encoding", "UTF-8 (with BOM)")],
     comment="UTF-8 byte order mark (Unicode Standard 23.8) is skipped")

case("03_utf16le_bom", "\ufeff" + BASIC, BASIC_EXPECT + [("encoding", "UTF-16LE")], enc="utf-16-le",
     comment="UTF-16LE with BOM FF FE, as spreadsheet 'Unicode text' exports write it")
case("04_utf16be_bom", "\ufeff" + BASIC, BASIC_EXPECT + [("encoding", "UTF-16BE")], enc="utf-16-be",
     comment="UTF-16BE with BOM FE FF")
case("05_utf16le_no_bom", BASIC, BASIC_EXPECT + [("encoding", "UTF-16LE")], enc="utf-16-le",
     comment="UTF-16LE without BOM, recognised by its zero bytes (common practice, no source)")

PRE = "Kreditorenjournal Januar 2024\r\nMandant: Musterhandel\r\n\r\n" \
      "Lieferant;Rechnungsnummer;Rechnungsdatum;Bruttobetrag\r\n" \
      "Müller & Söhne GmbH;R-100;07.01.2024;1.234,56\r\n" \
      "Bäckerei Weiß;R-101;15.01.2024;89,10\r\n" \
      "Müller & Söhne GmbH;R-102;31.01.2024;12.000,00\r\n"
case("06_cp1252_semicolon_preamble", PRE, [
    ("encoding", "Windows-1252"), ("delimiter", ";"), ("header_line", 4), ("decimal", "comma"),
    ("date_order", "dmy"), ("read", 3), ("analysed", 3), ("excluded", 0),
    ("supplier_names", "Müller & Söhne GmbH | Bäckerei Weiß"),
    ("invoices_total", D(["1234.56", "89.10", "12000.00"])),
    ("invoice", "5 1234.56 2024-01-07"), ("invoice", "7 12000.00 2024-01-31"),
    ("mapping", "supplier=1 amount=4 date=3 invoice=2")], enc="cp1252",
    comment="Windows-1252 (WHATWG Encoding Standard via encoding_rs), report preamble above the header, CRLF")

case("07_tab", BASIC.replace(",", "\t"), BASIC_EXPECT + [("delimiter", "tab")], ext="tsv",
     comment="tab-separated")
case("08_pipe", BASIC.replace(",", "|"), BASIC_EXPECT + [("delimiter", "|")], comment="pipe-separated")

QUOTED = 'Supplier,Memo,Amount,Date\n' \
         '"Smith, Jones & Co","two\nline memo","1,250.00",2024-02-01\n' \
         '"The ""Best"" Tools",plain,99.99,2024-02-02\n' \
         'Acme Ltd,"x",20.00,2024-02-03\n'
case("09_quoted_multiline", QUOTED, [
    ("read", 3), ("analysed", 3), ("supplier_names", 'Smith, Jones & Co | The "Best" Tools | Acme Ltd'),
    ("invoice", "2 1250.00 2024-02-01"), ("invoice", "4 99.99"), ("invoice", "5 20.00"),
    ("invoices_total", D(["1250.00", "99.99", "20.00"]))],
    comment="RFC 4180 2.5-2.7 quoting; line numbers are physical lines where each record starts")

case("10_crlf", BASIC.replace("\n", "\r\n"), BASIC_EXPECT, comment="CRLF line breaks")
case("11_cr_only", BASIC.replace("\n", "\r"), BASIC_EXPECT + [("invoice", "4 15.00")],
     comment="lone CR line breaks (classic Mac exports)")

FR = "Fournisseur;N° facture;Date facture;Montant TTC\n" \
     "Éditions Côté;F1;05/02/2024;1\u00a0234,56\n" \
     "Boulangerie Dupont;F2;13/02/2024;12\u202f345,00 €\n" \
     "Éditions Côté;F3;20/02/2024;45,50\n"
case("12_space_grouping", FR, [
    ("decimal", "comma"), ("date_order", "dmy"), ("read", 3), ("analysed", 3),
    ("invoices_total", D(["1234.56", "12345.00", "45.50"])), ("invoice", "3 12345.00 2024-02-13"),
    ("mapping", "supplier=1 amount=4 date=3 invoice=2")],
    comment="no-break space and narrow no-break space grouping, euro sign after (CLDR fr)")

CH = "Lieferant,Datum,Betrag\nAlpen AG,2024-03-01,CHF 1'234.50\nSee GmbH,2024-03-02,2\u2019500.00\nAlpen AG,2024-03-03,99.95\n"
case("13_apostrophe_grouping", CH, [
    ("decimal", "point"), ("read", 3), ("analysed", 3), ("invoices_total", D(["1234.50", "2500.00", "99.95"]))],
    comment="apostrophe grouping (CLDR de-CH), ISO code before the number")

CUR = "Vendor,Amount,Date\nA,EUR 1,234.56,2024-01-01\n".replace("EUR 1,234.56", '"EUR 1,234.56"') + \
      "B,$99.00,2024-01-02\nC,\"12.00 USD\",2024-01-03\nD,£45.00,2024-01-04\n"
case("14_currency_markers", CUR, [
    ("read", 4), ("analysed", 4), ("invoices_total", D(["1234.56", "99.00", "12.00", "45.00"]))],
    comment="currency symbols and ISO 4217 codes before or after")

NEG = "Supplier,Amount,Date\nA,-120.00,2024-01-01\nA,(250.50),2024-01-02\nB,75.25-,2024-01-03\n" \
      "B,1000.00 CR,2024-01-04\nC,300.00 DR,2024-01-05\nC,400.00,2024-01-06\n"
case("15_negative_styles", NEG, [
    ("read", 6), ("analysed", 2), ("credit_notes", 4),
    ("credit_total", D(["120.00", "250.50", "75.25", "1000.00"])),
    ("invoices_total", D(["300.00", "400.00"])),
    ("exclusion", "credit_note 4 @ 2 3 4 5")],
    comment="negatives as -x, (x), x-, CR; DR positive (common practice, no source)")

case("16_credit_below_minimum", "Supplier,Amount\nA,-5.00\nA,-50.00\nA,5.00\nA,50.00\n", [
    ("read", 4), ("analysed", 1), ("credit_notes", 1), ("credit_total", "50.00"),
    ("exclusion", "credit_note 1 @ 3"), ("exclusion", "below_minimum 2 @ 2 4")],
    comment="a negative below the minimum counts as below_minimum, not as a credit note (documented decision)")

case("17_zero", "Supplier,Amount\nA,0.00\nA,0\nA,12.00\n", [
    ("read", 3), ("analysed", 1), ("exclusion", "zero_amount 2 @ 2 3")], comment="zero amounts")

case("18_blank_rows", "Supplier,Amount\nA,12.00\n\n,\nB,13.00\n\n\n", [
    ("read", 6), ("analysed", 2), ("exclusion", "blank_row 4 @ 3 4 6 7")],
    comment="blank and empty-cell lines between and after data rows; lines 6 and 7 are empty, the final newline ends line 7")

case("19_ragged", "Supplier,Date,Amount\nA,2024-01-01,12.00\nB,2024-01-02\nC\nD,2024-01-03,14.00\n", [
    ("read", 4), ("analysed", 2), ("exclusion", "ragged_row 2 @ 3 4")], comment="rows with too few cells")

case("20_too_many_cells", "Supplier,Date,Amount\nA,2024-01-01,12.00\nB,2024-01-02,1234,56\nC,2024-01-03,14.00\n", [
    ("read", 3), ("analysed", 2), ("exclusion", "too_many_cells 1 @ 3")],
    comment="an unquoted decimal comma in a comma-separated file splits the amount: row excluded, not misread")

case("21_missing_supplier", "Supplier,Amount\nA,12.00\n,13.00\n  ,14.00\nB,15.00\n", [
    ("read", 4), ("analysed", 2), ("exclusion", "missing_supplier 2 @ 3 4")], comment="supplier cell empty")

case("22_unparseable", "Supplier,Amount\nA,n/a\nA,1.2E+05\nA,12.00\nA,12..0\n", [
    ("read", 4), ("analysed", 1), ("exclusion", "unparseable_amount 3 @ 2 3 5")],
    comment="amounts not readable: text, spreadsheet exponent notation, double separator")

case("23_blank_amount", "Supplier,Amount,Date\nA,,2024-01-01\nA,12.00,2024-01-02\n", [
    ("read", 2), ("analysed", 1), ("exclusion", "blank_amount 1 @ 2")], comment="amount cell empty")

TOT = "Lieferant;Belegnr;Datum;Betrag\nA;1;01.02.2024;100,00\nA;2;02.02.2024;200,00\nSumme A;;;300,00\n" \
      "B;3;03.02.2024;50,00\nZwischensumme:;;;50,00\nTotal;;;350,00\n"
case("24_totals_words", TOT, [
    ("read", 6), ("analysed", 3), ("exclusion", "totals_line 3 @ 4 6 7"),
    ("invoices_total", "350.00")], comment="totals/subtotal lines by their first word (German, English)")

TSUM = "Supplier,Invoice,Amount\nA,1,100.00\nB,2,250.00\n,,350.00\nC,3,10.00\n,,10.00\n,,360.00\n,,999.00\n"
case("25_totals_by_sum", TSUM, [
    ("read", 7), ("analysed", 3), ("exclusion", "totals_line 3 @ 4 6 7"), ("exclusion", "missing_supplier 1 @ 8")],
    comment="no supplier and an amount equal to the sum of the rows above (subtotal, then grand total)")

REP = "Supplier,Amount\nA,12.00\nB,13.00\nSupplier,Amount\nC,14.00\nSUPPLIER , AMOUNT\nD,15.00\n"
case("26_repeated_header", REP, [
    ("read", 6), ("analysed", 4), ("exclusion", "repeated_header 2 @ 4 6")],
    comment="header repeated at page breaks of a printed export")

case("27_dates_dmy_inferred", "Supplier,Date,Amount\nA,03/04/2024,12.00\nA,25/04/2024,13.00\nA,05/06/2024,14.00\n", [
    ("date_order", "dmy"), ("invoice", "2 12.00 2024-04-03"), ("invoice", "4 14.00 2024-06-05")],
    comment="one day > 12 decides day-first for the column")
case("28_dates_mdy_inferred", "Supplier,Date,Amount\nA,03/04/2024,12.00\nA,04/25/2024,13.00\nA,05/06/2024,14.00\n", [
    ("date_order", "mdy"), ("invoice", "2 12.00 2024-03-04"), ("invoice", "4 14.00 2024-05-06")],
    comment="one second part > 12 decides month-first")
case("29_dates_ambiguous", "Supplier,Date,Amount\nA,03/04/2024,12.00\nA,05/06/2024,13.00\n", [
    ("error", "ambiguous_date_order"), ("message_contains", "--date-order")],
    comment="every date reads both ways: ask, do not guess")
case("30_dates_ambiguous_given", "Supplier,Date,Amount\nA,03/04/2024,12.00\nA,05/06/2024,13.00\n", [
    ("opt_date_order", "mdy"), ("invoice", "2 12.00 2024-03-04"), ("date_order", "mdy")],
    comment="same file with the order given")
case("30b_dates_ymd_given", "Supplier,Date,Amount\nA,03/04/2024,12.00\nA,2024-06-05,13.00\n", [
    ("opt_date_order", "ymd"), ("invoice", "2 12.00 -"), ("invoice", "3 13.00 2024-06-05"), ("date_order", "ymd"),
    ("warning_contains", "1 rows have a date")],
    comment="year-first asked for: a day/month date is unreadable rather than guessed")
case("31_decimal_ambiguous", "Supplier;Amount\nA;1,234\nB;12,500\nC;100,250\n", [
    ("error", "ambiguous_decimal"), ("message_contains", "--decimal")],
    comment="every amount like 1,234: thousands or decimals cannot be told")
case("32_decimal_ambiguous_given", "Supplier;Amount\nA;1,234\nB;12,500\nC;100,250\n", [
    ("opt_decimal", "comma"), ("read", 3), ("analysed", 2), ("exclusion", "below_minimum 1 @ 2"),
    ("invoices_total", D(["12.500", "100.250"]))], comment="same file read with a decimal comma")

# Ambiguous for more than the 64 KiB sniff window, decided by a later row.
rnd = random.Random(7)
rows = []
amts = []
for i in range(6000):
    a = f"{rnd.randint(10, 999)},{rnd.randint(0, 999):03d}"
    rows.append(f"S{i % 40};{a}")
    amts.append(a.replace(",", "."))
rows.append("S1;17,5")
amts.append("17.5")
case("33_decimal_decided_late", "Supplier;Amount\n" + "\n".join(rows) + "\n", [
    ("read", 6001), ("analysed", 6001), ("decimal", "comma"), ("invoices_total", D(amts)),
    ("invoice", "6002 17.50"), ("chunked", 4096)],
    comment="amounts like 123,456 for more than 64 KiB, then 17,5: held-back rows are read with the decimal comma")

case("34_serial_dates", "Supplier,Date,Amount\nA,45292,12.00\nA,45351.5,13.00\nA,45658,14.00\n", [
    ("invoice", "2 12.00 2024-01-01"), ("invoice", "4 14.00 2025-01-01"),
    ("warning_contains", "1 rows have a date")],
    comment="spreadsheet serials (1900 system, 1899-12-30 + n, common practice): 45292 = 2024-01-01; fractional serial not accepted")
case("35_two_digit_years", "Supplier,Date,Amount\nA,31.12.29,12.00\nA,01.01.30,13.00\n", [
    ("invoice", "2 12.00 2029-12-31"), ("invoice", "3 13.00 1930-01-01")],
    comment="two-digit years pivot at 30 (spreadsheet default, common practice)")
case("36_iso_with_time", "Supplier,Date,Amount\nA,2024-03-07T10:15:00,12.00\nA,2024-03-08 23:59,13.00\n", [
    ("invoice", "2 12.00 2024-03-07"), ("invoice", "3 13.00 2024-03-08"), ("date_order", "ymd")],
    comment="ISO 8601 date-time: the time part is ignored")

case("37_german", "Belegnummer;Belegdatum;Kreditorennummer;Lieferant;Nettobetrag;Bruttobetrag\n"
     "B1;02.01.2024;70001;Schmidt KG;100,00;119,00\nB2;03.01.2024;70002;Weber OHG;1.000,00;1.190,00\n", [
    ("mapping", "supplier=4 amount=6 date=2 invoice=1"), ("invoices_total", "1309.00")],
    comment="German headers; supplier name over supplier number, gross over net")
case("38_dutch", "Factuurnummer;Factuurdatum;Vervaldatum;Leverancier;Bedrag\nF1;13-01-2024;12-02-2024;Jansen BV;€ 1.250,00\n", [
    ("mapping", "supplier=4 amount=5 date=2 invoice=1"), ("invoice", "2 1250.00 2024-01-13")],
    comment="Dutch headers; invoice date over due date")
case("39_spanish", "Proveedor;Nº factura;Fecha;Importe\nLópez SA;F-1;13/05/2024;1.500,00\n", [
    ("mapping", "supplier=1 amount=4 date=3 invoice=2"), ("invoice", "2 1500.00 2024-05-13")], comment="Spanish headers")
case("40_italian", "Fornitore;Numero fattura;Data;Importo\nRossi Srl;1;13/05/2024;2.500,75\n", [
    ("mapping", "supplier=1 amount=4 date=3 invoice=2"), ("invoice", "2 2500.75 2024-05-13")], comment="Italian headers")
case("41_portuguese", "Fornecedor;Número da fatura;Data;Valor\nSilva Lda;9;13/05/2024;R$ 3.200,10\n", [
    ("mapping", "supplier=1 amount=4 date=3 invoice=2"), ("invoice", "2 3200.10 2024-05-13")], comment="Portuguese headers")
case("42_nordic", "Leverandør;Fakturanr;Dato;Beløp\nHansen AS;77;13.05.2024;kr 4 100,00\n", [
    ("mapping", "supplier=1 amount=4 date=3 invoice=2"), ("invoice", "2 4100.00 2024-05-13")], comment="Norwegian headers")
case("43_french_headers_point", "Fournisseur,Date,Montant\nDupont,2024-05-13,99.50\n", [
    ("mapping", "supplier=1 amount=3 date=2 invoice=-")], comment="French headers, point decimals")
case("44_headerless", "Acme Ltd,2024-01-05,1234.56\nBeta,2024-01-06,89.10\nAcme Ltd,2024-01-07,15.00\n", [
    ("header_line", 0), ("read", 3), ("analysed", 3), ("mapping", "supplier=1 amount=3 date=2 invoice=-"),
    ("warning_contains", "no header row")], comment="no header row: columns from content")
case("45_supplier_spellings", "Supplier,Amount\n Acme  Ltd ,12.00\nACME LTD,13.00\nacme\u00a0ltd,14.00\nBeta,15.00\n", [
    ("suppliers", 2), ("supplier_names", "Acme  Ltd | Beta")],
    comment="names compared case- and space-insensitively; first spelling kept (trimmed)")

case("46_empty", b"", [("error", "empty")], comment="empty file")
case("47_whitespace_only", "\n  \n\t\n", [("error", "empty")], comment="only blank lines")
case("48_header_only", "Supplier,Amount\n", [("error", "header_only")], comment="header, no rows")
case("49_header_then_blank", "Supplier,Amount\n\n\n", [("error", "header_only")], comment="header and blank lines only")
case("50_xlsx", b"PK\x03\x04\x14\x00\x06\x00" + b"\x00" * 40 + b"[Content_Types].xml", [
    ("error", "not_csv"), ("message_contains", "export it as CSV")], ext="xlsx", comment="ZIP signature (workbook)")
case("51_xls", bytes([0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]) + b"\x00" * 64, [
    ("error", "not_csv"), ("message_contains", "xls")], ext="xls", comment="OLE2 compound file signature")
case("52_pdf", b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n", [("error", "not_csv"), ("message_contains", "PDF")],
     ext="pdf", comment="PDF signature")
rb = random.Random(3)
case("53_binary", bytes([0x01, 0x00, 0x07]) + bytes(rb.randrange(256) for _ in range(2000)), [("error", "binary")],
     ext="bin", comment="binary data")
case("54_single_column", "Amount\n12.00\n13.00\n", [("error", "single_column")], comment="one column")
case("55_no_numeric", "Supplier,Note\nA,hello\nB,world\n", [("error", "no_numeric_column")], comment="no amounts")
case("56_unclosed_quote", 'Supplier,Amount\nA,12.00\n"B,13.00\nC,14.00\n', [
    ("read", 2), ("analysed", 1), ("exclusion", "ragged_row 1 @ 3")],
    comment="a quote never closed swallows the rest of the file into one cell: counted as one ragged row")
case("57_unreadable_date", "Supplier,Date,Amount\nA,soon,12.00\nA,2024-13-01,13.00\nA,,14.00\n", [
    ("read", 3), ("analysed", 3), ("invoice", "2 12.00 -"), ("warning_contains", "2 rows have a date")],
    comment="unreadable dates do not exclude the row (documented decision); blank dates are no date")
case("58_chunked_cp1252", PRE, [("read", 3), ("invoices_total", D(["1234.56", "89.10", "12000.00"])), ("chunked", 7)],
     enc="cp1252", comment="the preamble file fed in 7-byte chunks")
