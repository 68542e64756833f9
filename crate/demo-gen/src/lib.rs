//! Deterministic generator of the invented demo ledger `demo-files/heathervale-vet-ledger.csv`.
//!
//! Scenario (all names and figures invented): Heathervale Veterinary Partners, a regional group of
//! six clinics, and its suppliers from 2021-01-01 to 2025-12-31. Most suppliers are honest; a few
//! honest ones deviate from Benford's law for plain reasons (fixed rents, per-seat subscriptions,
//! a fixed-fee courier, lease instalments, insurance instalments); three suppliers carry invoices
//! that were fabricated in the story, each in a different style (see [`Twist`] and
//! `demo-files/README.md`).
//!
//! Determinism: one fixed seed, one xoshiro256++ stream per supplier (so changing one supplier
//! does not change the others), integer arithmetic for money, and only `libm` functions (pure
//! Rust) or IEEE-exact operations (+, -, *, /, sqrt, int<->float conversion) for floating point.
//! The output is therefore the same bytes on every platform.

use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

/// The fixed seed of the demo ledger.
pub const SEED: u64 = 0x4845_4154_4845_5256; // "HEATHERV"

/// The CSV header row.
pub const HEADER: &str = "Supplier,Invoice No,Invoice Date,Clinic,Cost Centre,Amount";

/// The six clinics of the group and their relative size (per mille, 1000 = an average clinic).
pub const CLINICS: [&str; 6] = ["Ashcombe", "Brackenford", "Cullingham", "Dunmere", "Elmstead", "Foxbridge"];
const CLINIC_SIZE: [u32; 6] = [1800, 1200, 1000, 850, 700, 550];

const FIRST_DAY: (i32, u32, u32) = (2021, 1, 1);
const LAST_DAY: (i32, u32, u32) = (2025, 12, 31);

/// Price level per year 2021..2025 (per mille of 2021).
const PRICE_LEVEL: [i64; 5] = [1000, 1030, 1100, 1150, 1180];

// ---------------------------------------------------------------------------------------------
// Random numbers

/// A deterministic generator: xoshiro256++ (from `rand_xoshiro`) seeded through SplitMix64.
pub struct DemoRng(Xoshiro256PlusPlus);

impl DemoRng {
    pub fn new(seed: u64) -> DemoRng {
        DemoRng(Xoshiro256PlusPlus::seed_from_u64(seed))
    }
    /// The stream of one purpose (e.g. a supplier index).
    pub fn stream(tag: u64) -> DemoRng {
        DemoRng::new(SEED ^ tag.wrapping_mul(0x9e37_79b9_7f4a_7c15).rotate_left(17))
    }
    pub fn next(&mut self) -> u64 {
        self.0.next_u64()
    }
    /// Uniform integer in `0..n` (n > 0), without modulo bias.
    pub fn below(&mut self, n: u64) -> u64 {
        assert!(n > 0);
        let zone = u64::MAX - (u64::MAX - n + 1) % n;
        loop {
            let v = self.next();
            if v <= zone {
                return v % n;
            }
        }
    }
    /// Uniform integer in `lo..=hi`.
    pub fn range(&mut self, lo: i64, hi: i64) -> i64 {
        lo + self.below((hi - lo + 1) as u64) as i64
    }
    /// Uniform in [0, 1) with 53 random bits (exact conversion).
    pub fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 * (1.0 / 9_007_199_254_740_992.0)
    }
    /// True with probability `per_mille / 1000`.
    pub fn chance(&mut self, per_mille: u64) -> bool {
        self.below(1000) < per_mille
    }
    /// Standard normal (Box-Muller with `libm`).
    pub fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.unit(); // (0, 1]
        let u2 = self.unit();
        libm::sqrt(-2.0 * libm::log(u1)) * libm::cos(2.0 * core::f64::consts::PI * u2)
    }
    /// Log-normal with the given median and log-scale sigma.
    pub fn lognormal(&mut self, median: f64, sigma: f64) -> f64 {
        median * libm::exp(sigma * self.normal())
    }
    /// Exponential with the given mean.
    pub fn exponential(&mut self, mean: f64) -> f64 {
        -mean * libm::log(1.0 - self.unit())
    }
    /// Index drawn with integer weights.
    pub fn weighted(&mut self, w: &[u32]) -> usize {
        let total: u64 = w.iter().map(|&x| x as u64).sum();
        let mut r = self.below(total);
        for (i, &x) in w.iter().enumerate() {
            if r < x as u64 {
                return i;
            }
            r -= x as u64;
        }
        w.len() - 1
    }
}

// ---------------------------------------------------------------------------------------------
// Dates (proleptic Gregorian, days since 1970-01-01; H. Hinnant's civil-date algorithms)

pub fn days_from_civil(y: i32, m: u32, d: u32) -> i32 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let m = m as i32;
    let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + d as i32 - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

pub fn civil_from_days(z: i32) -> (i32, u32, u32) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// ISO text `YYYY-MM-DD`.
pub fn iso(day: i32) -> String {
    let (y, m, d) = civil_from_days(day);
    format!("{y:04}-{m:02}-{d:02}")
}

/// 0 = Monday .. 6 = Sunday (1970-01-01 was a Thursday).
fn weekday(day: i32) -> i32 {
    (day + 3).rem_euclid(7)
}

fn day(t: (i32, u32, u32)) -> i32 {
    days_from_civil(t.0, t.1, t.2)
}

fn year_index(day: i32) -> usize {
    (civil_from_days(day).0 - 2021).clamp(0, 4) as usize
}

/// The first day of each month from `from` to `to` (inclusive), as (year, month).
fn months(from: i32, to: i32) -> Vec<(i32, u32)> {
    let (mut y, mut m, _) = civil_from_days(from);
    let mut v = Vec::new();
    while days_from_civil(y, m, 1) <= to {
        v.push((y, m));
        m += 1;
        if m > 12 {
            m = 1;
            y += 1;
        }
    }
    v
}

/// The first Monday-to-Friday day on or after `d`.
fn working_day_from(mut d: i32) -> i32 {
    while weekday(d) >= 5 {
        d += 1;
    }
    d
}

// ---------------------------------------------------------------------------------------------
// Money helpers (pence)

fn add_vat(net: i64, pct: i64) -> i64 {
    net + (net * pct + 50) / 100
}

fn at_price_level(pence: i64, day: i32) -> i64 {
    (pence * PRICE_LEVEL[year_index(day)] + 500) / 1000
}

fn to_pence(pounds: f64) -> i64 {
    libm::round(pounds * 100.0) as i64
}

/// Plain decimal text with two decimals, no thousands separator.
pub fn format_pence(p: i64) -> String {
    let sign = if p < 0 { "-" } else { "" };
    let a = p.unsigned_abs();
    format!("{sign}{}.{:02}", a / 100, a % 100)
}

// ---------------------------------------------------------------------------------------------
// Suppliers

/// How a supplier's genuine amounts arise.
#[derive(Clone, Debug)]
enum Model {
    /// A catalogue of `items` list prices (log-normal, median in pounds); each invoice has
    /// order lines (exponential count, scaled by clinic size) with quantities 1..=max_qty
    /// (small ones likelier); lines summed, VAT added.
    Catalogue { items: u32, median: f64, sigma: f64, mean_lines: f64, max_lines: u32, max_qty: u32, vat: i64 },
    /// One priced service per invoice, log-normal in pounds (referrals, courses, repairs).
    Priced { median: f64, sigma: f64, vat: i64 },
    /// Hours x hourly rate: shifts (1 + exponential count) of `min..=max` half hours each at one
    /// of `rates` (pence/hour), VAT added.
    Hours { rates: &'static [i64], min_half_hours: i64, max_half_hours: i64, mean_shifts: f64, vat: i64 },
    /// Batches of metered jobs (1 + exponential count, mean `mean_batch`): per job `base` +
    /// units x `rate` (pence), units log-normal.
    Metered { base: i64, rate: i64, median_units: f64, sigma: f64, mean_batch: f64, vat: i64 },
    /// One bill per clinic every `every` months: usage (log-normal around the clinic's size,
    /// seasonal) x tariff (pence per unit, per year) + standing charge per day, VAT added.
    Utility { usage: f64, sigma: f64, winter: f64, tariff_tenths: [i64; 5], standing: i64, every: u32, vat: i64 },
    /// Fixed monthly rent per leased clinic (pence, 0 = owned), raised on a review date to a
    /// round figure; VAT added (landlord opted to tax).
    Rent { monthly: [i64; 6], review: (i32, u32, u32), uplift_pct: i64 },
    /// Monthly subscription per clinic: seats x price per seat (pence, per year), VAT added.
    Subscription { seat_price: [i64; 5], min_seats: i64, max_seats: i64 },
    /// Per-consignment fixed fees (pence incl. VAT), raised each April.
    FixedFee { fees: &'static [i64], weights: &'static [u32] },
    /// `contracts` agreements with a fixed monthly instalment each, each renewed on expiry at
    /// a new instalment; `renew_pct` the usual increase at renewal.
    Instalments { contracts: u32, median: f64, sigma: f64, term_months: &'static [u32], renew_pct: i64 },
    /// Amounts made up by a person (see [`invented_amount`]).
    Invented,
}

/// The fabrication in a supplier's story, if any.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Twist {
    None,
    /// Style 1: a fake supplier; every invoice invented by hand.
    FakeSupplier,
    /// Style 2: from the date on, extra invoices are slipped in, so that about `share` per mille
    /// of the supplier's invoices are fabricated, with amounts spread evenly over
    /// the supplier's own usual range (the middle half of its earlier amounts: lower to upper
    /// quartile).
    Padding { from: (i32, u32, u32), share: u64 },
    /// Style 3: from the date on, `share` per mille of invoices are kept just below the approval
    /// limit: amounts evenly in `low..limit` (pence).
    BelowLimit { from: (i32, u32, u32), share: u64, low: i64, limit: i64 },
}

#[derive(Clone, Copy, Debug)]
enum Numbering {
    /// Prefix and a running number with gaps (the supplier has other customers).
    Running { digits: usize, max_gap: u64 },
    /// Prefix, year and a number restarting each year: `PFX-2023-0042`.
    Yearly,
    /// Prefix and consecutive numbers (this group is the only customer).
    Consecutive,
}

struct Spec {
    name: &'static str,
    prefix: &'static str,
    numbering: Numbering,
    centre: &'static str,
    /// Target number of invoices for models drawn by date (scheduled models ignore it).
    n: u32,
    start: (i32, u32, u32),
    end: (i32, u32, u32),
    model: Model,
    twist: Twist,
    /// Saturday invoices allowed (deliveries, cremations).
    saturdays: bool,
}

const S: (i32, u32, u32) = FIRST_DAY;
const E: (i32, u32, u32) = LAST_DAY;
const RUN: Numbering = Numbering::Running { digits: 6, max_gap: 60 };

fn specs() -> Vec<Spec> {
    use Model::*;
    let sp = |name, prefix, numbering, centre, n, model| Spec {
        name,
        prefix,
        numbering,
        centre,
        n,
        start: S,
        end: E,
        model,
        twist: Twist::None,
        saturdays: false,
    };
    let mut v = vec![
        // --- high-volume stock suppliers
        Spec { saturdays: true, ..sp("Pellbrook Vet Wholesale", "PB", Numbering::Running { digits: 7, max_gap: 400 }, "PHARM", 25_000,
            Catalogue { items: 900, median: 12.0, sigma: 1.25, mean_lines: 5.0, max_lines: 60, max_qty: 12, vat: 20 }) },
        sp("Ormsdale Animal Health", "OAH", Numbering::Running { digits: 7, max_gap: 300 }, "PHARM", 16_000,
            Catalogue { items: 600, median: 12.0, sigma: 1.2, mean_lines: 4.0, max_lines: 50, max_qty: 10, vat: 20 }),
        Spec { saturdays: true, ..sp("Tansybank Laboratories", "TL", Numbering::Running { digits: 7, max_gap: 500 }, "LAB", 23_000,
            Catalogue { items: 1_200, median: 12.0, sigma: 1.3, mean_lines: 4.0, max_lines: 30, max_qty: 6, vat: 20 }) },
        sp("Quillmoor Pet Nutrition", "QPN", RUN, "FOOD", 15_000,
            Catalogue { items: 700, median: 14.0, sigma: 1.05, mean_lines: 3.5, max_lines: 40, max_qty: 12, vat: 20 }),
        Spec { saturdays: true, ..sp("Lanthorn Pet Crematorium", "LPC", RUN, "CREM", 9_500,
            Metered { base: 900, rate: 520, median_units: 9.0, sigma: 1.2, mean_batch: 2.5, vat: 20 }) },
        sp("Wrenhollow Vaccines", "WV", RUN, "PHARM", 7_500,
            Catalogue { items: 160, median: 14.0, sigma: 1.25, mean_lines: 3.5, max_lines: 20, max_qty: 10, vat: 20 }),
        sp("Mistlecombe Parasiticides", "MP", RUN, "PHARM", 7_000,
            Catalogue { items: 140, median: 14.0, sigma: 1.0, mean_lines: 3.0, max_lines: 30, max_qty: 15, vat: 20 }),
        sp("Sallowfield Retail Supplies", "SRS", RUN, "RETAIL", 6_000,
            Catalogue { items: 500, median: 6.5, sigma: 1.1, mean_lines: 6.0, max_lines: 50, max_qty: 12, vat: 20 }),
        // Style 2 below (padding from 2023-09-01).
        sp("Kestrelmead Surgical", "KS", RUN, "THEATRE", 5_000,
            Catalogue { items: 400, median: 9.0, sigma: 1.3, mean_lines: 4.0, max_lines: 40, max_qty: 10, vat: 20 }),
        sp("Copperfield Dental Supplies", "CDS", RUN, "THEATRE", 3_000,
            Catalogue { items: 220, median: 15.0, sigma: 1.1, mean_lines: 3.0, max_lines: 25, max_qty: 8, vat: 20 }),
        sp("Fennick Office Supplies", "FOS", RUN, "ADMIN", 3_000,
            Catalogue { items: 400, median: 4.5, sigma: 1.2, mean_lines: 5.0, max_lines: 40, max_qty: 10, vat: 20 }),
        sp("Brightwater Medical Gases", "BMG", RUN, "THEATRE", 1_800,
            Catalogue { items: 80, median: 35.0, sigma: 1.2, mean_lines: 2.5, max_lines: 12, max_qty: 6, vat: 20 }),
        sp("Tidewell Laundry", "TWL", Numbering::Yearly, "THEATRE", 1_500,
            Metered { base: 0, rate: 185, median_units: 38.0, sigma: 0.75, mean_batch: 1.0, vat: 20 }),
        // --- services
        sp("Pinecrest Locum Agency", "PLA", Numbering::Yearly, "STAFF", 2_200,
            Hours { rates: &[2_850, 3_400, 3_900, 6_500, 7_800, 9_500], min_half_hours: 8, max_half_hours: 24, mean_shifts: 2.5, vat: 20 }),
        sp("Brisk & Bright Cleaning", "BBC", Numbering::Yearly, "ESTATES", 1_800,
            Hours { rates: &[1_650, 1_950, 2_400], min_half_hours: 4, max_half_hours: 16, mean_shifts: 6.0, vat: 20 }),
        sp("Marshfield Waste Services", "MWS", RUN, "ESTATES", 1_700,
            Metered { base: 1_500, rate: 120, median_units: 60.0, sigma: 1.0, mean_batch: 1.5, vat: 20 }),
        sp("Ravensmoor Referrals", "RR", RUN, "REFER", 1_500, Priced { median: 950.0, sigma: 1.05, vat: 20 }),
        sp("Otterburn Engineering", "OE", Numbering::Yearly, "EQUIP", 900, Priced { median: 240.0, sigma: 1.1, vat: 20 }),
        // Style 3 below (kept under the approval limit from 2023-07-01).
        sp("Stonechat Building Services", "SBS", Numbering::Yearly, "ESTATES", 850, Priced { median: 420.0, sigma: 1.1, vat: 20 }),
        sp("Ferncastle IT Hardware", "FIT", RUN, "IT", 600,
            Catalogue { items: 150, median: 60.0, sigma: 1.2, mean_lines: 1.8, max_lines: 12, max_qty: 6, vat: 20 }),
        sp("Dovecote Microchip Supplies", "DMS", RUN, "PHARM", 400,
            Catalogue { items: 12, median: 55.0, sigma: 0.8, mean_lines: 1.5, max_lines: 6, max_qty: 10, vat: 20 }),
        sp("Gullhaven Imaging Services", "GIS", Numbering::Yearly, "IMAGING", 300, Priced { median: 380.0, sigma: 1.0, vat: 20 }),
        sp("Reedmace Hydrotherapy", "RH", Numbering::Yearly, "REFER", 300,
            Hours { rates: &[4_200, 5_500], min_half_hours: 1, max_half_hours: 2, mean_shifts: 5.0, vat: 0 }),
        sp("Meadowlark Uniforms", "MU", RUN, "STAFF", 250,
            Catalogue { items: 60, median: 18.0, sigma: 0.7, mean_lines: 3.0, max_lines: 20, max_qty: 8, vat: 20 }),
        sp("Ashworth CPD Training", "ACT", Numbering::Yearly, "STAFF", 200, Priced { median: 320.0, sigma: 1.1, vat: 0 }),
        sp("Wickerman Kennel Equipment", "WKE", RUN, "EQUIP", 150,
            Catalogue { items: 40, median: 180.0, sigma: 1.0, mean_lines: 1.5, max_lines: 6, max_qty: 4, vat: 20 }),
        sp("Thimbleby Print & Design", "TPD", Numbering::Yearly, "ADMIN", 120, Priced { median: 210.0, sigma: 0.9, vat: 20 }),
        sp("Corvid Pest Control", "CPC", Numbering::Yearly, "ESTATES", 80, Priced { median: 110.0, sigma: 0.6, vat: 20 }),
        // --- utilities and scheduled bills
        sp("Larkspur Energy", "LE", Numbering::Running { digits: 8, max_gap: 5_000 }, "UTIL", 0,
            Utility { usage: 5_200.0, sigma: 0.3, winter: 0.35, tariff_tenths: [165, 240, 345, 290, 265], standing: 95, every: 1, vat: 20 }),
        sp("Calderbrook Gas", "CG", Numbering::Running { digits: 8, max_gap: 5_000 }, "UTIL", 0,
            Utility { usage: 6_800.0, sigma: 0.35, winter: 0.7, tariff_tenths: [38, 69, 105, 72, 64], standing: 60, every: 1, vat: 20 }),
        sp("Vale Water Services", "VWS", Numbering::Running { digits: 8, max_gap: 9_000 }, "UTIL", 0,
            Utility { usage: 95.0, sigma: 0.6, winter: 0.0, tariff_tenths: [3_300, 3_410, 3_620, 3_980, 4_250], standing: 40, every: 3, vat: 0 }),
        sp("Hollins Telecom", "HT", Numbering::Running { digits: 8, max_gap: 5_000 }, "IT", 0,
            Utility { usage: 2_400.0, sigma: 0.55, winter: 0.0, tariff_tenths: [60, 60, 65, 70, 70], standing: 210, every: 1, vat: 20 }),
        // --- honest suppliers that deviate for plain reasons
        sp("Highmoor Estates", "HE", Numbering::Consecutive, "PREMISES", 0,
            Rent { monthly: [0, 325_000, 275_000, 410_000, 195_000, 240_000], review: (2023, 4, 1), uplift_pct: 8 }),
        sp("Cobaltline Practice Software", "CPS", Numbering::Running { digits: 7, max_gap: 900 }, "IT", 0,
            Subscription { seat_price: [9_500, 9_500, 10_500, 10_500, 11_500], min_seats: 5, max_seats: 14 }),
        Spec { saturdays: true, ..sp("Swiftfoot Couriers", "SC", Numbering::Running { digits: 7, max_gap: 200 }, "ADMIN", 4_500,
            FixedFee { fees: &[1_440, 1_800, 2_160, 2_700], weights: &[50, 25, 15, 10] }) },
        sp("Lindenwood Asset Finance", "LAF", Numbering::Running { digits: 7, max_gap: 2_000 }, "EQUIP", 0,
            Instalments { contracts: 22, median: 380.0, sigma: 0.9, term_months: &[36, 48, 60], renew_pct: 0 }),
        sp("Mallowbury Insurance Brokers", "MIB", Numbering::Running { digits: 6, max_gap: 900 }, "ADMIN", 0,
            Instalments { contracts: 3, median: 900.0, sigma: 0.6, term_months: &[12], renew_pct: 7 }),
        // Style 1: the fake supplier, from its first invoice.
        Spec { start: (2023, 5, 8), twist: Twist::FakeSupplier, ..sp("Quenby Clinical Solutions", "QCS-", Numbering::Consecutive, "THEATRE", 420, Invented) },
    ];
    for s in v.iter_mut() {
        match s.name {
            "Kestrelmead Surgical" => s.twist = Twist::Padding { from: (2023, 9, 1), share: 350 },
            "Stonechat Building Services" => {
                s.twist = Twist::BelowLimit { from: (2023, 7, 1), share: 400, low: 450_000, limit: 500_000 }
            }
            _ => {}
        }
    }
    v
}

// ---------------------------------------------------------------------------------------------
// Generation

/// One CSV data row.
#[derive(Clone, Debug)]
struct Row {
    date: i32,
    supplier: u16,
    seq: u32,
    invoice: String,
    clinic: u8,
    amount: i64,
}

/// What really happened at one supplier whose invoices were partly or wholly fabricated.
#[derive(Clone, Debug, PartialEq)]
pub struct Fabrication {
    pub supplier: &'static str,
    pub twist: Twist,
    /// ISO date of the first fabricated invoice.
    pub first: String,
    /// All invoices of the supplier in the file, and how many of them were fabricated.
    pub supplier_invoices: u64,
    pub fabricated_invoices: u64,
    /// Sum of the fabricated amounts (pence).
    pub fabricated_total: i64,
    /// Sum of the genuine amounts they replaced (pence; 0 for a fake supplier).
    pub replaced_total: i64,
    /// For padding: the usual range the fabricated amounts were spread over (pence).
    pub range: Option<(i64, i64)>,
}

/// Counts of the deliberately messy rows.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Messy {
    pub credit_notes: u64,
    pub zero_amounts: u64,
    pub below_ten: u64,
    pub blank_lines: u64,
}

/// The generated ledger and its true story.
pub struct DemoLedger {
    pub csv: Vec<u8>,
    pub data_rows: u64,
    pub suppliers: usize,
    pub fabrications: Vec<Fabrication>,
    pub messy: Messy,
}

/// Dates for `n` invoices over [start, end], Monday to Friday (and Saturdays at a quarter of
/// the weekday rate when allowed), with volume growing ~6 % a year.
fn random_dates(rng: &mut DemoRng, n: u32, start: i32, end: i32, saturdays: bool) -> Vec<i32> {
    let span = (end - start + 1) as u64;
    let mut v = Vec::with_capacity(n as usize);
    while v.len() < n as usize {
        let d = start + rng.below(span) as i32;
        let w = weekday(d);
        let keep = match w {
            0..=4 => 1000,
            5 if saturdays => 250,
            _ => 0,
        };
        // Growth: accept with weight 850 + 6 % per year of elapsed time.
        let grow = 850 + ((d - day(FIRST_DAY)) as u64 * 60 / 365);
        if rng.below(1000) < keep && rng.below(1200) < grow {
            v.push(d);
        }
    }
    v.sort_unstable();
    v
}

fn clinic(rng: &mut DemoRng) -> usize {
    rng.weighted(&CLINIC_SIZE)
}

fn size(c: usize) -> f64 {
    CLINIC_SIZE[c] as f64 / 1000.0
}

/// An amount made up by hand. People inventing numbers favour certain digits: they avoid
/// repeating a digit, prefer mid-range leading digits (3 to 7) over 1 and 2, and like round
/// endings (0 or 5, whole pounds). These preferences are from memory of the published findings
/// on invented numbers (e.g. Hill 1988, on digits people write when asked to make numbers up),
/// not a cited table; the weights below are our own invention.
fn invented_amount(rng: &mut DemoRng) -> i64 {
    let first = 1 + rng.weighted(&[5, 8, 14, 16, 15, 14, 13, 8, 7]) as i64;
    let whole_digits = if rng.chance(450) { 3 } else { 4 };
    let mut digits = vec![first];
    while digits.len() < whole_digits {
        let prev = *digits.last().unwrap();
        let pos = digits.len();
        let d = if pos >= 2 && prev != 0 && rng.chance(if pos == 2 { 400 } else { 600 }) {
            0
        } else if pos >= 2 && prev != 5 && rng.chance(300) {
            5
        } else {
            // Any digit but the one just written.
            let mut d = rng.range(0, 8);
            if d >= prev {
                d += 1;
            }
            d
        };
        digits.push(d);
    }
    let whole = digits.iter().fold(0i64, |a, &d| a * 10 + d);
    let cents = match rng.below(100) {
        0..=64 => 0,
        65..=79 => 50,
        _ => {
            let a = rng.range(1, 9);
            let mut b = rng.range(0, 8);
            if b >= a {
                b += 1;
            }
            a * 10 + b
        }
    };
    whole * 100 + cents
}

struct Built {
    rows: Vec<Row>,
    fabrication: Option<Fabrication>,
}

fn build_supplier(idx: usize, s: &Spec) -> Built {
    let mut rng = DemoRng::stream(idx as u64 + 1);
    let start = day(s.start);
    let end = day(s.end);
    // (date, clinic, amount)
    let mut inv: Vec<(i32, usize, i64)> = Vec::new();
    let monthly_dates = |dom: u32| -> Vec<i32> {
        months(start, end).into_iter().map(|(y, m)| working_day_from(days_from_civil(y, m, dom))).filter(|&d| d <= end).collect()
    };
    match &s.model {
        Model::Catalogue { items, median, sigma, mean_lines, max_lines, max_qty, vat } => {
            let prices: Vec<i64> = (0..*items)
                .map(|_| loop {
                    let p = to_pence(rng.lognormal(*median, *sigma));
                    if p >= 50 {
                        break p;
                    }
                })
                .collect();
            // Each item's own yearly price change (per mille around the general price level)
            // and each clinic's negotiated discount (0 to 8 %).
            let drift: Vec<[i64; 5]> = (0..*items).map(|_| core::array::from_fn(|y| if y == 0 { 0 } else { rng.range(-40, 40) })).collect();
            let discount: [i64; 6] = core::array::from_fn(|_| rng.range(0, 16) * 5);
            for d in random_dates(&mut rng, s.n, start, end, s.saturdays) {
                let c = clinic(&mut rng);
                let y = year_index(d);
                loop {
                    let lines = (1 + rng.exponential(mean_lines * size(c) - 1.0 + 0.01) as u32).min(*max_lines);
                    let mut net = 0;
                    for _ in 0..lines {
                        let i = rng.below(*items as u64) as usize;
                        let p = (prices[i] * (PRICE_LEVEL[y] + drift[i][y]) + 500) / 1000;
                        let u = rng.unit();
                        let q = 1 + (u * u * *max_qty as f64) as i64;
                        net += p * q.min(*max_qty as i64);
                    }
                    let net = net - (net * discount[c] + 500) / 1000;
                    let a = add_vat(net, *vat);
                    if a >= 1_000 {
                        inv.push((d, c, a));
                        break;
                    }
                }
            }
        }
        Model::Priced { median, sigma, vat } => {
            for d in random_dates(&mut rng, s.n, start, end, s.saturdays) {
                let c = clinic(&mut rng);
                let net = at_price_level(to_pence(rng.lognormal(*median, *sigma)), d).max(2_500);
                inv.push((d, c, add_vat(net, *vat)));
            }
        }
        Model::Hours { rates, min_half_hours, max_half_hours, mean_shifts, vat } => {
            for d in random_dates(&mut rng, s.n, start, end, s.saturdays) {
                let c = clinic(&mut rng);
                // Each booking's rate: a grade rate as negotiated (-10 % to +15 %, to 0.25).
                let grade = rates[rng.below(rates.len() as u64) as usize];
                let rate = at_price_level(grade * rng.range(90, 115) / 100 / 25 * 25, d);
                let shifts = 1 + (rng.exponential(*mean_shifts - 1.0) as i64).min(40);
                let mut half_hours = 0;
                for _ in 0..shifts {
                    half_hours += rng.range(*min_half_hours, *max_half_hours);
                }
                inv.push((d, c, add_vat(rate * half_hours / 2, *vat)));
            }
        }
        Model::Metered { base, rate, median_units, sigma, mean_batch, vat } => {
            for d in random_dates(&mut rng, s.n, start, end, s.saturdays) {
                let c = clinic(&mut rng);
                let jobs = 1 + (rng.exponential(*mean_batch - 1.0) as i64).min(40);
                let mut net = 0;
                for _ in 0..jobs {
                    let units = to_pence(rng.lognormal(*median_units * libm::sqrt(size(c)), *sigma)) ; // hundredths of a unit
                    net += at_price_level(*base, d) + (units * at_price_level(*rate, d) + 50) / 100;
                }
                inv.push((d, c, add_vat(net.max(1_000), *vat)));
            }
        }
        Model::Utility { usage, sigma, winter, tariff_tenths, standing, every, vat } => {
            for (c, &cs) in CLINIC_SIZE.iter().enumerate() {
                let dom = 3 + c as u32 * 2;
                for (k, (y, m)) in months(start, end).into_iter().enumerate() {
                    if k as u32 % every != 0 {
                        continue;
                    }
                    let d = working_day_from(days_from_civil(y, m, dom));
                    // Seasonal usage: highest in January.
                    let season = 1.0 + winter * libm::cos(2.0 * core::f64::consts::PI * (m as f64 - 1.0) / 12.0);
                    let units = rng.lognormal(usage * cs as f64 / 1000.0 * season * *every as f64, *sigma);
                    let yi = year_index(d);
                    let energy = (to_pence(units) * tariff_tenths[yi] + 500) / 1000; // units x tenths of pence
                    let days = 30 * *every as i64 + rng.range(-2, 1);
                    inv.push((d, c, add_vat(energy + standing * days, *vat)));
                }
            }
        }
        Model::Rent { monthly, review, uplift_pct } => {
            let rd = day(*review);
            for (c, &base) in monthly.iter().enumerate() {
                if base == 0 {
                    continue;
                }
                // Raised to a round figure (nearest 25.00).
                let raised = (base * (100 + uplift_pct) / 100 + 1_250) / 2_500 * 2_500;
                for d in monthly_dates(1) {
                    let r = if d >= rd { raised } else { base };
                    inv.push((d, c, add_vat(r, 20)));
                }
            }
        }
        Model::Subscription { seat_price, min_seats, max_seats } => {
            for c in 0..CLINICS.len() {
                let mut seats = (*min_seats + (*max_seats - *min_seats) * CLINIC_SIZE[c] as i64 / 1800).max(*min_seats);
                for d in monthly_dates(1) {
                    if rng.chance(40) {
                        seats = (seats + if rng.chance(700) { 1 } else { -1 }).clamp(*min_seats, *max_seats);
                    }
                    inv.push((d, c, add_vat(seats * seat_price[year_index(d)], 20)));
                }
            }
        }
        Model::FixedFee { fees, weights } => {
            for d in random_dates(&mut rng, s.n, start, end, s.saturdays) {
                let c = clinic(&mut rng);
                let (y, m, _) = civil_from_days(d);
                // Raised each April by 5 %, to the nearest 0.10 of the net fee.
                let raises = (y - 2021) as i64 - if m < 4 { 1 } else { 0 };
                let mut net = fees[rng.weighted(weights)] * 100 / 120;
                for _ in 0..raises.max(0) {
                    net = (net * 105 / 100 + 5) / 10 * 10;
                }
                inv.push((d, c, add_vat(net, 20)));
            }
        }
        Model::Instalments { contracts, median, sigma, term_months, renew_pct } => {
            for _ in 0..*contracts {
                let c = clinic(&mut rng);
                let dom = 1 + rng.below(28) as u32;
                let term = term_months[rng.below(term_months.len() as u64) as usize] as usize;
                // Agreements began up to one term before the ledger starts, or during it.
                let mut month = rng.range(-(term as i64) + 1, 48);
                let mut inst = to_pence(rng.lognormal(*median, *sigma)) / 100 * 100 + if rng.chance(500) { 0 } else { rng.range(1, 99) };
                let all = months(day(FIRST_DAY), end);
                while (month as usize) < all.len() || month < 0 {
                    for k in 0..term as i64 {
                        let mi = month + k;
                        if mi >= 0 && (mi as usize) < all.len() {
                            let (y, m) = all[mi as usize];
                            let d = working_day_from(days_from_civil(y, m, dom));
                            if d >= start && d <= end {
                                inv.push((d, c, add_vat(inst, 20)));
                            }
                        }
                    }
                    month += term as i64;
                    if *renew_pct == 0 {
                        // Leases are not renewed; a new agreement may replace one at times.
                        if !rng.chance(600) {
                            break;
                        }
                        inst = to_pence(rng.lognormal(*median, *sigma)) / 100 * 100;
                    } else {
                        inst = inst * (100 + renew_pct + rng.range(-3, 5)) / 100;
                    }
                }
            }
        }
        Model::Invented => {
            for d in random_dates(&mut rng, s.n, start, end, false) {
                let c = clinic(&mut rng);
                inv.push((d, c, invented_amount(&mut rng)));
            }
        }
    }
    inv.sort_by_key(|&(d, c, _)| (d, c));

    // The fabrication of the story.
    let mut fab = None;
    match s.twist {
        Twist::None => {}
        Twist::FakeSupplier => {
            fab = Some(Fabrication {
                supplier: s.name,
                twist: s.twist,
                first: iso(inv[0].0),
                supplier_invoices: inv.len() as u64,
                fabricated_invoices: inv.len() as u64,
                fabricated_total: inv.iter().map(|x| x.2).sum(),
                replaced_total: 0,
                range: None,
            });
        }
        Twist::Padding { from, share } => {
            let fd = day(from);
            let mut earlier: Vec<i64> = inv.iter().filter(|x| x.0 < fd).map(|x| x.2).collect();
            earlier.sort_unstable();
            let lo = earlier[earlier.len() / 4];
            let hi = earlier[earlier.len() * 3 / 4];
            let mut f = Fabrication { supplier: s.name, twist: s.twist, first: String::new(), supplier_invoices: inv.len() as u64,
                fabricated_invoices: 0, fabricated_total: 0, replaced_total: 0, range: Some((lo, hi)) };
            // Extra invoices: after each genuine one, with probability share / (1 - share), so
            // that about `share` of the invoices from the date on are fabricated.
            let mut extra = Vec::new();
            for x in inv.iter().filter(|x| x.0 >= fd) {
                if rng.below(1000 - share) < share {
                    let a = rng.range(lo, hi);
                    let d = working_day_from(x.0 + rng.range(0, 3) as i32).min(end);
                    extra.push((d, x.1, a));
                    f.fabricated_invoices += 1;
                    f.fabricated_total += a;
                }
            }
            inv.extend(extra.iter().copied());
            inv.sort_by_key(|&(d, c, _)| (d, c));
            f.supplier_invoices = inv.len() as u64;
            f.first = extra.iter().map(|x| x.0).min().map(iso).unwrap_or_default();
            fab = Some(f);
        }
        Twist::BelowLimit { from, share, low, limit } => {
            let fd = day(from);
            let mut f = Fabrication { supplier: s.name, twist: s.twist, first: String::new(), supplier_invoices: inv.len() as u64,
                fabricated_invoices: 0, fabricated_total: 0, replaced_total: 0, range: Some((low, limit - 1)) };
            for x in inv.iter_mut().filter(|x| x.0 >= fd) {
                if rng.chance(share) {
                    let a = rng.range(low, limit - 1);
                    if f.first.is_empty() {
                        f.first = iso(x.0);
                    }
                    f.fabricated_invoices += 1;
                    f.fabricated_total += a;
                    f.replaced_total += x.2;
                    x.2 = a;
                }
            }
            fab = Some(f);
        }
    }

    // Invoice numbers in date order.
    let mut rows = Vec::with_capacity(inv.len());
    let mut running = 10u64.pow(match s.numbering { Numbering::Running { digits, .. } => digits as u32 - 1, _ => 2 })
        + rng.below(10u64.pow(match s.numbering { Numbering::Running { digits, .. } => digits as u32 - 1, _ => 2 }) * 3);
    let mut year = 0;
    let mut yearly = 0;
    for (seq, (d, c, a)) in inv.into_iter().enumerate() {
        let invoice = match s.numbering {
            Numbering::Running { digits, max_gap } => {
                running += 1 + rng.below(max_gap);
                format!("{}{:0w$}", s.prefix, running, w = digits)
            }
            Numbering::Yearly => {
                let y = civil_from_days(d).0;
                if y != year {
                    year = y;
                    yearly = rng.below(20);
                }
                yearly += 1 + rng.below(8);
                format!("{}-{}-{:04}", s.prefix, y, yearly)
            }
            Numbering::Consecutive => {
                running += 1;
                format!("{}{}", s.prefix, running)
            }
        };
        rows.push(Row { date: d, supplier: idx as u16, seq: seq as u32, invoice, clinic: c as u8, amount: a });
    }
    Built { rows, fabrication: fab }
}

/// Generate the demo ledger (deterministic: the same bytes on every call and platform).
pub fn generate() -> DemoLedger {
    let specs = specs();
    let mut rows = Vec::new();
    let mut fabrications = Vec::new();
    for (i, s) in specs.iter().enumerate() {
        let b = build_supplier(i, s);
        rows.extend(b.rows);
        fabrications.extend(b.fabrication);
    }

    // A few realistic messy rows, on honest suppliers only.
    let mut rng = DemoRng::stream(0xC0FFEE);
    let mut messy = Messy::default();
    let by_name = |n: &str| specs.iter().position(|s| s.name == n).unwrap() as u16;
    let honest = |r: &Row| specs[r.supplier as usize].twist == Twist::None;
    let pick = |rng: &mut DemoRng, rows: &[Row], sup: u16| -> usize {
        loop {
            let i = rng.below(rows.len() as u64) as usize;
            if rows[i].supplier == sup {
                return i;
            }
        }
    };
    debug_assert!(rows.iter().any(honest));
    // Credit notes: returned goods, dated a few days after the invoice they credit.
    let last = day(LAST_DAY);
    for (name, count) in [("Pellbrook Vet Wholesale", 12), ("Ormsdale Animal Health", 6), ("Quillmoor Pet Nutrition", 7), ("Sallowfield Retail Supplies", 4), ("Ferncastle IT Hardware", 2)] {
        let sup = by_name(name);
        for _ in 0..count {
            let i = pick(&mut rng, &rows, sup);
            let orig = rows[i].clone();
            let part = (orig.amount * rng.range(10, 100) / 100).max(1_200);
            rows.push(Row {
                date: working_day_from(orig.date + rng.range(3, 20) as i32).min(last),
                supplier: sup,
                seq: u32::MAX,
                invoice: format!("CN{}", orig.invoice),
                clinic: orig.clinic,
                amount: -part,
            });
            messy.credit_notes += 1;
        }
    }
    // Zero amounts: no-charge replacements and cancelled test requests.
    for name in ["Kestrelmead Surgical", "Tansybank Laboratories", "Tansybank Laboratories", "Fennick Office Supplies", "Otterburn Engineering", "Pellbrook Vet Wholesale"] {
        let sup = by_name(name);
        if !specs[sup as usize].twist.eq(&Twist::None) {
            continue; // never alter a supplier whose story is a fabrication
        }
        let i = pick(&mut rng, &rows, sup);
        rows[i].amount = 0;
        messy.zero_amounts += 1;
    }
    // Amounts below 10.00: small stationery orders and courier surcharges.
    for name in ["Fennick Office Supplies"; 9].into_iter().chain(["Sallowfield Retail Supplies"; 3]) {
        let sup = by_name(name);
        let i = pick(&mut rng, &rows, sup);
        rows[i].amount = rng.range(150, 999);
        messy.below_ten += 1;
    }

    rows.sort_by(|a, b| (a.date, a.supplier, a.seq).cmp(&(b.date, b.supplier, b.seq)));

    // Blank lines at three places.
    let mut blanks: Vec<usize> = (0..3).map(|_| 1 + rng.below(rows.len() as u64 - 2) as usize).collect();
    blanks.sort_unstable();
    blanks.dedup();
    messy.blank_lines = blanks.len() as u64;

    let mut csv = Vec::with_capacity(rows.len() * 70);
    csv.extend_from_slice(HEADER.as_bytes());
    csv.push(b'\n');
    let mut bi = 0;
    for (i, r) in rows.iter().enumerate() {
        if bi < blanks.len() && blanks[bi] == i {
            csv.push(b'\n');
            bi += 1;
        }
        let s = &specs[r.supplier as usize];
        csv.extend_from_slice(
            format!("{},{},{},{},{},{}\n", s.name, r.invoice, iso(r.date), CLINICS[r.clinic as usize], s.centre, format_pence(r.amount)).as_bytes(),
        );
    }
    DemoLedger { csv, data_rows: rows.len() as u64, suppliers: specs.len(), fabrications, messy }
}

/// FNV-1a 64-bit hash (for the stability test).
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in bytes {
        h ^= b as u64;
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// Thousands-separated pounds for the README (display only).
fn money(p: i64) -> String {
    let s = format_pence(p);
    let (whole, cents) = s.split_once('.').unwrap();
    let mut out = String::new();
    for (i, ch) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    format!("{out}.{cents}")
}

/// The true story as a Markdown table (embedded verbatim in `demo-files/README.md`; a test
/// checks that the README still matches the generator).
pub fn truth_markdown(l: &DemoLedger) -> String {
    let mut s = String::new();
    s.push_str("| Supplier | Style | First fabricated invoice | Invoices in file | Fabricated invoices | Fabricated amount | Genuine amount replaced |\n");
    s.push_str("|---|---|---|---:|---:|---:|---:|\n");
    for f in &l.fabrications {
        let style = match f.twist {
            Twist::FakeSupplier => "fake supplier, amounts invented by hand".to_string(),
            Twist::Padding { share, .. } => {
                let (lo, hi) = f.range.unwrap();
                format!("padding: ~{} % of invoices spread evenly over {}–{}", share / 10, money(lo), money(hi))
            }
            Twist::BelowLimit { share, low, limit, .. } => {
                format!("below approval limit: ~{} % of invoices at {}–{}", share / 10, money(low), money(limit - 1))
            }
            Twist::None => unreachable!(),
        };
        let replaced = if f.replaced_total == 0 { "—".to_string() } else { money(f.replaced_total) };
        s.push_str(&format!(
            "| {} | {} | {} | {} | {} | {} | {} |\n",
            f.supplier, style, f.first, f.supplier_invoices, f.fabricated_invoices, money(f.fabricated_total), replaced
        ));
    }
    let m = &l.messy;
    s.push_str(&format!(
        "\nData rows: {} ({} suppliers). Messy rows: {} credit notes (negative amounts), {} zero amounts, {} amounts below 10.00, {} blank lines.\n",
        l.data_rows, l.suppliers, m.credit_notes, m.zero_amounts, m.below_ten, m.blank_lines
    ));
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates_match_python_datetime() {
        // Reference: Python `date(y, m, d).toordinal() - date(1970, 1, 1).toordinal()` and
        // `date.weekday()` (0 = Monday), run by hand when writing this test.
        for (ymd, days, wd) in [((2021, 1, 1), 18_628, 4), ((2025, 12, 31), 20_453, 2), ((2000, 2, 29), 11_016, 1), ((1969, 12, 31), -1, 2), ((2024, 3, 1), 19_783, 4)] {
            assert_eq!(days_from_civil(ymd.0, ymd.1, ymd.2), days);
            assert_eq!(civil_from_days(days), ymd);
            assert_eq!(weekday(days), wd);
        }
        for d in days_from_civil(2020, 1, 1)..days_from_civil(2027, 1, 1) {
            let (y, m, dd) = civil_from_days(d);
            assert_eq!(days_from_civil(y, m, dd), d);
        }
    }

    #[test]
    fn invented_amounts_have_the_intended_habits() {
        let mut rng = DemoRng::stream(99);
        let mut first = [0u32; 10];
        for _ in 0..20_000 {
            let a = invented_amount(&mut rng);
            let whole = (a / 100).to_string();
            assert!((3..=4).contains(&whole.len()), "{a}");
            let b = whole.as_bytes();
            assert!(b.windows(2).all(|w| w[0] != w[1]), "repeated digit in {whole}");
            first[(b[0] - b'0') as usize] += 1;
        }
        // Benford gives ~30 % leading 1s; these invented amounts must have far fewer, and more
        // 3-7 than 1-2 (the design of the fabrication, not an outside figure).
        assert!(first[1] < 20_000 / 10);
        assert!(first[3..=7].iter().sum::<u32>() > 3 * (first[1] + first[2]));
    }

    #[test]
    fn money_text_is_plain() {
        assert_eq!(format_pence(-123_456), "-1234.56");
        assert_eq!(format_pence(5), "0.05");
        assert_eq!(money(123_456_789), "1,234,567.89");
        assert_eq!(add_vat(1_000, 20), 1_200);
        assert_eq!(add_vat(1_003, 20), 1_204); // 200.6p rounds to 201p
    }

    #[test]
    fn below_is_within_range() {
        let mut r = DemoRng::new(1);
        for n in [1u64, 2, 3, 7, 1000, u64::MAX / 3 + 1] {
            for _ in 0..200 {
                assert!(r.below(n) < n);
            }
        }
    }
}
