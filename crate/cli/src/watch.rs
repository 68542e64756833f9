//! `digitdrift watch` (continuous monitoring) — lands with its issue.
pub fn run(_raw: &[String]) -> Result<u8, String> {
    Err("watch is not built yet".into())
}
