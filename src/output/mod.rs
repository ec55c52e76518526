//! Everything a person or a script reads: text tables, JSON, CSV, SVG charts and the HTML report.
//! Each submodule renders one command's result from library values; nothing here computes
//! numerics or touches the file system.

pub mod bands;
pub mod bands_elements;
pub mod bands_plot;
pub mod csv;
pub mod data;
pub mod data_plot;
mod data_plot_frame;
pub mod data_report;
pub mod estimate;
pub mod estimate_report;
pub mod irf;
pub mod moments;
pub mod ordered_json;
pub mod policy;
pub mod provenance;
pub mod report;
pub mod simulate;
pub mod solve;
pub mod summary;
pub mod svg;
pub mod sweep;
pub mod table;
