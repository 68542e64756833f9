//! The one binding layer between the digitdrift core and the browser. Nothing else in the
//! project touches wasm-bindgen, js-sys or web-sys. The Worker uses [`Session`] for the heavy
//! work; the page uses the `draw_*` functions (plotters-canvas) on its own copy of the module.

mod chart;

use digitdrift_core::intake::{DateOrder, DecimalConvention, Intake, IntakeOptions, IntakeResult};
use digitdrift_core::{report, Amount};
use serde::Deserialize;
use wasm_bindgen::prelude::*;

pub use chart::*;

fn to_js<T: serde::Serialize>(v: &T) -> Result<JsValue, JsValue> {
    v.serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| JsValue::from_str(&e.to_string()))
}

fn err(e: impl std::fmt::Display) -> JsValue {
    JsValue::from_str(&e.to_string())
}

/// Options as the page sends them (every field optional).
#[derive(Deserialize, Default)]
#[serde(default)]
struct JsOptions {
    supplier: Option<String>,
    amount: Option<String>,
    date: Option<String>,
    invoice: Option<String>,
    decimal: Option<String>,
    date_order: Option<String>,
    min_amount: Option<String>,
}

fn intake_options(v: JsValue) -> Result<IntakeOptions, JsValue> {
    let o: JsOptions = if v.is_undefined() || v.is_null() {
        JsOptions::default()
    } else {
        serde_wasm_bindgen::from_value(v).map_err(err)?
    };
    let mut io = IntakeOptions::default();
    let nonempty = |s: Option<String>| s.filter(|t| !t.trim().is_empty());
    io.supplier = nonempty(o.supplier);
    io.amount = nonempty(o.amount);
    io.date = nonempty(o.date);
    io.invoice = nonempty(o.invoice);
    io.decimal = match nonempty(o.decimal).as_deref() {
        Some("comma") => Some(DecimalConvention::Comma),
        Some("point") => Some(DecimalConvention::Point),
        _ => None,
    };
    io.date_order = match nonempty(o.date_order).as_deref() {
        Some("dmy") => Some(DateOrder::Dmy),
        Some("mdy") => Some(DateOrder::Mdy),
        Some("ymd") => Some(DateOrder::Ymd),
        _ => None,
    };
    if let Some(m) = nonempty(o.min_amount) {
        let a = digitdrift_core::intake::parse_amount_simple(&m)
            .ok_or_else(|| err(format!("minimum amount: cannot read '{m}'")))?;
        io.min_amount = Amount(a.0.abs());
    }
    Ok(io)
}

/// One screening session in the Worker: stream the file in, then ask for results.
#[wasm_bindgen]
pub struct Session {
    intake: Option<Intake>,
    result: Option<IntakeResult>,
}

#[wasm_bindgen]
impl Session {
    #[wasm_bindgen(constructor)]
    pub fn new(options: JsValue) -> Result<Session, JsValue> {
        Ok(Session { intake: Some(Intake::new(intake_options(options)?)), result: None })
    }

    /// Feed the next chunk of the file, in order.
    pub fn feed(&mut self, chunk: &[u8]) -> Result<(), JsValue> {
        self.intake.as_mut().ok_or_else(|| err("intake already finished"))?.feed(chunk).map_err(err)
    }

    #[wasm_bindgen(js_name = rowsSoFar)]
    pub fn rows_so_far(&self) -> f64 {
        self.intake.as_ref().map_or(0.0, |i| i.rows_so_far() as f64)
    }

    /// Finish intake. On error returns `{error: {kind, ...}, message}`.
    pub fn finish(&mut self) -> Result<JsValue, JsValue> {
        let intake = self.intake.take().ok_or_else(|| err("intake already finished"))?;
        match intake.finish() {
            Ok(r) => {
                let out = serde_json::json!({"ok": true, "rows": r.ledger.accounting, "intake": r.info});
                self.result = Some(r);
                to_js(&out)
            }
            Err(e) => to_js(&serde_json::json!({"ok": false, "error": e, "message": e.to_string()})),
        }
    }

    /// The batch screen of the finished ledger.
    pub fn screen(&self) -> Result<JsValue, JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        to_js(&report::screen(&r.ledger, &r.info))
    }

    /// Invoices of one supplier (id from the screen), optionally only those whose first-two
    /// digits equal `first_two` (0 = all). Returns [{line, date, amount}].
    pub fn invoices(&self, supplier: u32, first_two: u32) -> Result<JsValue, JsValue> {
        let r = self.result.as_ref().ok_or_else(|| err("no ledger yet"))?;
        let rows: Vec<serde_json::Value> = r
            .ledger
            .invoices_of(supplier)
            .filter(|i| first_two == 0 || i.amount.leading_digits(2) == Some(first_two))
            .map(|i| {
                serde_json::json!({
                    "line": i.line,
                    "date": digitdrift_core::intake::format_date(i.date),
                    "amount": i.amount.to_string(),
                })
            })
            .collect();
        to_js(&rows)
    }
}

/// Version string shown in the page footer.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}
