//! Shared by the plugin's integration tests.

use rfsite_model::{load, MaterialLibrary, Site, SourceFile};

/// The site `text` loaded with the built-in materials; a test fails with the diagnostics
/// when it does not load.
pub fn load_site(text: &str) -> Site {
    let loaded = load(
        &SourceFile::new("t.toml", text),
        &MaterialLibrary::builtin(),
    );
    let diags: Vec<String> = loaded
        .diagnostics
        .items
        .iter()
        .map(|d| d.to_string())
        .collect();
    loaded
        .site
        .unwrap_or_else(|| panic!("test site does not load: {diags:?}"))
}
