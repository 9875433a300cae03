//! Printers of kernel programs: one module per target language.

pub mod rust;
