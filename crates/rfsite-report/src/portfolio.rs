//! The portfolio summary PDF: one document over many sites' results.
//!
//! Like the site report, the data reach Typst as one JSON document in `sys.inputs.data`
//! (built by the caller, every number already formatted), so site names never become
//! markup. The template is `templates/portfolio/portfolio.typ`, compiled in.

use typst::foundations::{Bytes, Dict, IntoValue};
use typst_as_lib::TypstEngine;

use crate::{ReportError, FONTS};

/// The built-in portfolio summary template.
pub const PORTFOLIO_TEMPLATE: &str = include_str!("../../../templates/portfolio/portfolio.typ");

/// Renders the summary PDF from its view model (see the template for the fields it reads).
/// No date is read from the clock: the PDF carries none.
pub fn render_portfolio(view: &serde_json::Value) -> Result<Vec<u8>, ReportError> {
    let data = serde_json::to_vec(view).map_err(|e| ReportError(e.to_string()))?;
    let mut inputs = Dict::new();
    inputs.insert("data".into(), Bytes::new(data).into_value());
    let engine = TypstEngine::builder()
        .main_file(PORTFOLIO_TEMPLATE)
        .fonts(FONTS.iter().copied())
        .search_fonts_with(
            typst_as_lib::typst_kit_options::TypstKitFontOptions::default()
                .include_system_fonts(false)
                .include_embedded_fonts(true),
        )
        .build();
    let compiled = engine.compile_with_input::<_, typst_layout::PagedDocument>(inputs);
    let doc = compiled
        .output
        .map_err(|e| ReportError(format!("typesetting the portfolio summary failed: {e:?}")))?;
    let opts = typst_pdf::PdfOptions {
        ident: typst::foundations::Smart::Custom("rfsite/portfolio".into()),
        timestamp: None,
        ..Default::default()
    };
    typst_pdf::pdf(&doc, &opts)
        .map(crate::without_default_suspects)
        .map_err(|e| ReportError(format!("PDF export failed: {e:?}")))
}

/// Drops Typst's memoised results that have not been used for a while, so that a process
/// rendering thousands of reports keeps a bounded cache.
pub fn evict_caches() {
    typst::comemo::evict(10);
}
