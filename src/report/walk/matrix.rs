//! The walk's matrices: what each axis holds (named for a corner such as
//! "cost of ↓ / share of →"), what the cells measure, and the cells themselves
//! as plain figures. Pure data with plain-text words; no markup, no colour.

use crate::analysis::random::Figure;

/// What one axis of a matrix holds.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Holds {
    /// The alternative whose attribute (named) changes.
    Changed(String),
    /// Characteristics of the decision maker, one per row.
    Variable,
    /// 0/1 variables switched from 0 to 1 ("promo of own_label" for an attribute's).
    Flag,
    /// The alternative withdrawn.
    Withdrawn,
    /// The alternative whose share is affected.
    ShareOf,
    /// The alternative the demand moves to.
    MovesTo,
    /// Random coefficients' underlying normals (their logarithms, for lognormals).
    Normal,
    /// Random coefficients themselves.
    Coefficient,
}

impl Holds {
    /// The axis's words in a corner: "cost of", "share of", "moves to", ...
    pub fn words(&self) -> String {
        match self {
            Holds::Changed(attribute) => format!("{attribute} of"),
            Holds::Variable => "variable".into(),
            Holds::Flag => "flag".into(),
            Holds::Withdrawn => "withdrawn".into(),
            Holds::ShareOf => "share of".into(),
            Holds::MovesTo => "moves to".into(),
            Holds::Normal => "normal of".into(),
            Holds::Coefficient => "coefficient".into(),
        }
    }
}

/// One axis: what it holds and its labels in order.
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    pub holds: Holds,
    pub labels: Vec<String>,
}

/// What a matrix's cells measure.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Measure {
    /// Point elasticities: % change in the share per 1% change of the variable.
    PointElasticity,
    /// Arc elasticities, by re-simulation at the given change (a fraction, 0.10 = +10%).
    ArcElasticity { change: f64 },
    /// The change in each share when a 0/1 variable switches from 0 to 1.
    FlagSwitch,
    /// Average marginal effects: change in the share per one unit more.
    MarginalEffect,
    /// Diversion on withdrawal: the share of the withdrawn demand that moves.
    Withdrawal,
    /// Diversion ratios for a change in an attribute: -(dQ_to/dx)/(dQ_changed/dx).
    PriceDiversion,
    /// Correlations of random coefficients' underlying normals (-1 to 1).
    Correlation,
    /// Correlations of the random coefficients themselves (-1 to 1).
    CoefficientCorrelation,
}

impl Measure {
    /// Whether the cells are shares of demand (0 to 1) rather than elasticities
    /// or changes (the heat scale and the digits shown follow this).
    pub fn is_diversion(self) -> bool {
        matches!(self, Measure::Withdrawal | Measure::PriceDiversion)
    }

    /// Whether the cells are correlations (-1 to 1, shaded on their own scale).
    pub fn is_correlation(self) -> bool {
        matches!(self, Measure::Correlation | Measure::CoefficientCorrelation)
    }
}

/// One cell.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Cell {
    /// No figure for this pair (the variable does not enter there, ...).
    Missing,
    /// The row and the column are the same (diversion's diagonal, a
    /// correlation matrix's).
    Same,
    /// A figure with its standard error (not a number when there is none).
    Value(Figure),
}

impl Cell {
    /// The figure's value, if there is one.
    pub fn value(self) -> Option<f64> {
        match self {
            Cell::Value(f) => Some(f.value),
            _ => None,
        }
    }
}

/// A matrix of figures: rows × columns, row-major cells.
#[derive(Clone, Debug, PartialEq)]
pub struct Matrix {
    pub measure: Measure,
    pub rows: Axis,
    pub columns: Axis,
    pub cells: Vec<Cell>,
}

impl Matrix {
    /// Builds a matrix from a cell for each (row label, column label).
    pub fn build(
        measure: Measure,
        rows: Axis,
        columns: Axis,
        cell: impl Fn(&str, &str) -> Cell,
    ) -> Matrix {
        let cells = rows
            .labels
            .iter()
            .flat_map(|r| columns.labels.iter().map(|c| cell(r, c)))
            .collect();
        Matrix {
            measure,
            rows,
            columns,
            cells,
        }
    }

    /// The cell at row `r`, column `c` (missing outside the matrix).
    pub fn cell(&self, r: usize, c: usize) -> Cell {
        if c >= self.columns.labels.len() {
            return Cell::Missing;
        }
        self.cells
            .get(r * self.columns.labels.len() + c)
            .copied()
            .unwrap_or(Cell::Missing)
    }

    /// The corner naming both axes: "cost of ↓ / share of →".
    pub fn corner(&self) -> String {
        format!(
            "{} ↓ / {} →",
            self.rows.holds.words(),
            self.columns.holds.words()
        )
    }

    /// A cell as plain text: about three significant digits and the error
    /// after `sep` for elasticities and changes, three decimals for diversion
    /// (and for correlations, with the error after `sep`);
    /// a dash on the diagonal and nothing where there is no figure.
    pub fn cell_text(&self, r: usize, c: usize, sep: &str) -> String {
        match self.cell(r, c) {
            Cell::Missing => String::new(),
            Cell::Same => "—".into(),
            Cell::Value(f) if self.measure.is_diversion() => format!("{:.3}", f.value),
            Cell::Value(f) if self.measure.is_correlation() => {
                if f.std_error.is_finite() {
                    format!("{:.3}{sep}{:.3}", f.value, f.std_error)
                } else {
                    format!("{:.3}", f.value)
                }
            }
            Cell::Value(f) => crate::report::value_se(f.value, f.std_error, sep),
        }
    }

    /// Rows of several matrices with the same columns stacked into one; each
    /// part's rows are labelled `{prefix} of {row}` (as they are when the
    /// prefix is empty). None when no part has a row.
    pub fn stack<'a>(
        measure: Measure,
        holds: Holds,
        columns: &[String],
        parts: impl Iterator<Item = (&'a Matrix, String)>,
    ) -> Option<Matrix> {
        let mut labels = Vec::new();
        let mut cells = Vec::new();
        for (m, prefix) in parts {
            for (r, label) in m.rows.labels.iter().enumerate() {
                labels.push(if prefix.is_empty() {
                    label.clone()
                } else {
                    format!("{prefix} of {label}")
                });
                cells.extend((0..columns.len()).map(|c| m.cell(r, c)));
            }
        }
        (!labels.is_empty()).then(|| Matrix {
            measure,
            rows: Axis { holds, labels },
            columns: Axis {
                holds: Holds::ShareOf,
                labels: columns.to_vec(),
            },
            cells,
        })
    }
}
