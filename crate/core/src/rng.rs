//! (lands with its issue)
