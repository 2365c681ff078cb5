//! The report: one self-contained HTML file that collaborators can open from
//! disk, plus the text helpers the rating packet and the command line share.

mod text;

pub use text::{escape_html, fixed, fixed_opt, interval, p_text, percent_level, script_json};
