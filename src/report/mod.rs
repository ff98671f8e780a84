//! Writing results: CSV and JSON (atomically), SVG charts, the HTML report.

pub mod html;
