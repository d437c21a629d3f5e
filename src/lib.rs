//! plumb: regression fits requested from workbook cells.
//!
//! An analyst types a request such as `#linear(Yield, Light + CO2)` into a
//! cell; `plumb run book.xlsx` reads the workbook, fits every request and
//! writes a new workbook with coefficient, interval and diagnostic sheets and
//! residual columns beside the data. Data flows one way through the modules:
//!
//! ```text
//! read → cells → syntax → resolve → fits (numeric) → layout → write
//! ```
//!
//! `pipeline` runs the stages and `cli` is the thin command line on top.

pub mod cells;
pub mod cli;
pub mod fits;
pub mod host;
pub mod layout;
pub mod numeric;
pub mod pipeline;
pub mod predict;
pub mod problems;
pub mod protocol;
pub mod read;
pub mod recipe;
pub mod report;
pub mod resolve;
pub mod syntax;
pub mod write;
