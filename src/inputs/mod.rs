//! Readers for every input file, and loading a plan's inputs together.
//!
//! Real exports are read as they come (see `table`); each reader checks its
//! own rules and reports every problem with file, line and column.

pub mod clusters;
pub mod keywords;
pub mod load;
pub mod monthly;
pub mod number;
pub mod outliers;
pub mod queries;
pub mod scenarios;
pub mod table;
