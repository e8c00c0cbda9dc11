//! Text, CSV, the Markdown report and its pictures, made from the models; no model
//! imports these.

pub mod estimates_text;
pub mod pool_bias_text;
pub mod quality_text;
pub mod render;
pub mod report;
pub mod report_estimates;
pub mod report_pictures;
