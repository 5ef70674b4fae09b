//! Reports: tables, JSON and CSV exporters for results computed by the other stages.
//! `report` reads results; it computes none.

pub mod audit;
pub mod evaluate;
pub mod features_csv;
pub mod font;
pub mod info;
pub mod plot;
pub mod scores;
pub mod table;
pub mod tracks;
pub mod train;

pub use table::Table;

/// Output formats of the commands that print results.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum)]
pub enum Format {
    /// Aligned text columns for people.
    #[default]
    Table,
    /// JSON as docs/output-format.md defines it.
    Json,
}
