//! Reports for people (aligned tables) and for scripts (CSV, JSON).

pub mod assign;
pub mod atoms;
pub mod fit;
pub mod predict;
pub mod rank;
pub mod table;
pub mod trajectory;

/// The caution printed with every prediction for people.
pub const CAUTION: &str = "Caution: predicted couplings are model estimates. The Karplus-type equations \
carry errors of their own (about 0.5-1 Hz RMS for Haasnoot-de Leeuw-Altona on its training data), and \
more where conformer geometries or energies are poor; confirm structural assignments by independent evidence.";

/// Output form of a report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OutputForm {
    /// Aligned text table for people.
    Table,
    /// Comma-separated values.
    Csv,
    /// JSON document.
    Json,
}

impl OutputForm {
    /// Parses `table`, `csv` or `json`.
    pub fn from_name(s: &str) -> Option<OutputForm> {
        match s.to_ascii_lowercase().as_str() {
            "table" | "text" => Some(OutputForm::Table),
            "csv" => Some(OutputForm::Csv),
            "json" => Some(OutputForm::Json),
            _ => None,
        }
    }
}
