//! Diagnostics with source locations: every input problem is one [`Diagnostic`] that
//! names the file, the line and column, what is wrong and how to fix it.

use std::fmt;
use std::ops::Range;

use annotate_snippets::{AnnotationKind, Group, Level, Renderer, Snippet};

/// How bad a problem is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// Stops the run: nothing is written.
    Error,
    /// Reported, the run goes on.
    Warning,
}

/// A source text with its display path, able to turn byte offsets into line and column.
#[derive(Debug, Clone)]
pub struct SourceFile {
    /// The path as shown to the user (relative to the working folder where possible).
    pub display_path: String,
    /// The whole text.
    pub text: String,
    line_starts: Vec<usize>,
}

impl SourceFile {
    /// Wraps a text read from `display_path`.
    pub fn new(display_path: impl Into<String>, text: impl Into<String>) -> Self {
        let text = text.into();
        let mut line_starts = vec![0];
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                line_starts.push(i + 1);
            }
        }
        SourceFile {
            display_path: display_path.into(),
            text,
            line_starts,
        }
    }

    /// 1-based line and column (in characters) of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let line = match self.line_starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i - 1,
        };
        let start = self.line_starts[line];
        let col = self
            .text
            .get(start..offset)
            .map(|s| s.chars().count())
            .unwrap_or(0);
        (line + 1, col + 1)
    }

    /// The text of a 1-based line, without its newline.
    pub fn line_text(&self, line: usize) -> &str {
        let start = self.line_starts.get(line - 1).copied().unwrap_or(0);
        let end = self
            .line_starts
            .get(line)
            .copied()
            .unwrap_or(self.text.len());
        self.text
            .get(start..end)
            .unwrap_or("")
            .trim_end_matches(['\n', '\r'])
    }
}

/// One problem found in the input.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Diagnostic {
    /// Error or warning.
    pub severity: Severity,
    /// The file as shown to the user.
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
    /// What is wrong, in one sentence.
    pub message: String,
    /// How to fix it, where we can say.
    pub hint: Option<String>,
    /// The offending source line, for the caret display.
    #[serde(skip)]
    pub source_line: String,
    /// Length of the underline in characters.
    #[serde(skip)]
    pub width: usize,
}

impl Diagnostic {
    /// A diagnostic located at a byte span of `file`.
    pub fn at(
        severity: Severity,
        file: &SourceFile,
        span: Range<usize>,
        message: impl Into<String>,
        hint: Option<String>,
    ) -> Self {
        let (line, column) = file.line_col(span.start);
        let source_line = file.line_text(line).to_string();
        let width = file
            .text
            .get(span.clone())
            .map(|s| s.lines().next().unwrap_or("").chars().count())
            .unwrap_or(1)
            .max(1);
        Diagnostic {
            severity,
            file: file.display_path.clone(),
            line,
            column,
            message: message.into(),
            hint,
            source_line,
            width,
        }
    }

    /// A diagnostic about a whole file (line 1, column 1).
    pub fn whole_file(
        severity: Severity,
        file: &str,
        message: impl Into<String>,
        hint: Option<String>,
    ) -> Self {
        Diagnostic {
            severity,
            file: file.to_string(),
            line: 1,
            column: 1,
            message: message.into(),
            hint,
            source_line: String::new(),
            width: 1,
        }
    }

    /// True for errors.
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

impl Diagnostic {
    /// The problem as text: `file:line:column: error: message` on the first line, then the
    /// source line with the span underlined and the hint, laid out by `annotate-snippets`
    /// (the renderer the Rust compiler uses for its own diagnostics). `styled` adds ANSI
    /// colours; the caller decides (only on a terminal, never with `NO_COLOR`).
    pub fn render(&self, styled: bool) -> String {
        let (kind, level) = match self.severity {
            Severity::Error => ("error", Level::ERROR),
            Severity::Warning => ("warning", Level::WARNING),
        };
        let title = format!(
            "{}:{}:{}: {kind}: {}",
            self.file, self.line, self.column, self.message
        );
        let mut group = Group::with_title(level.no_name().primary_title(title));
        if !self.source_line.is_empty() {
            group = group.element(
                Snippet::source(self.source_line.as_str())
                    .line_start(self.line)
                    .annotation(AnnotationKind::Primary.span(self.underlined())),
            );
        }
        if let Some(h) = &self.hint {
            group = group.element(Level::HELP.with_name("hint").message(h.as_str()));
        }
        let renderer = if styled {
            Renderer::styled()
        } else {
            Renderer::plain()
        };
        let mut text = renderer.render(&[group]);
        text.push('\n');
        text
    }

    /// The byte range of the source line under the caret: `width` characters from
    /// `column`, cut at the end of the line.
    fn underlined(&self) -> Range<usize> {
        let line = &self.source_line;
        let byte = |chars: usize| {
            line.char_indices()
                .nth(chars)
                .map_or(line.len(), |(i, _)| i)
        };
        let start = byte(self.column.saturating_sub(1));
        start..byte(self.column.saturating_sub(1) + self.width.max(1)).max(start)
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.render(false))
    }
}

/// A list of diagnostics collected while loading.
#[derive(Debug, Default, Clone)]
pub struct Diagnostics {
    /// All problems, in the order found (sorted by [`Diagnostics::sorted`]).
    pub items: Vec<Diagnostic>,
}

impl Diagnostics {
    /// Adds one.
    pub fn push(&mut self, d: Diagnostic) {
        if !self.items.contains(&d) {
            self.items.push(d);
        }
    }
    /// Any errors?
    pub fn has_errors(&self) -> bool {
        self.items.iter().any(Diagnostic::is_error)
    }
    /// Number of errors.
    pub fn error_count(&self) -> usize {
        self.items.iter().filter(|d| d.is_error()).count()
    }
    /// Number of warnings.
    pub fn warning_count(&self) -> usize {
        self.items.len() - self.error_count()
    }
    /// Sorted by file, line, column: the order a reader fixes them in.
    pub fn sorted(mut self) -> Self {
        self.items.sort_by(|a, b| {
            (&a.file, a.line, a.column, a.severity).cmp(&(&b.file, b.line, b.column, b.severity))
        });
        self
    }
}

/// The closest names to `wanted` among `known`, for "did you mean" hints.
pub fn closest<'a>(wanted: &str, known: impl IntoIterator<Item = &'a str>) -> Vec<&'a str> {
    let mut scored: Vec<(f64, &str)> = known
        .into_iter()
        .map(|k| {
            (
                strsim::jaro_winkler(&wanted.to_lowercase(), &k.to_lowercase()),
                k,
            )
        })
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(b.1)));
    scored
        .into_iter()
        .filter(|(s, _)| *s > 0.7)
        .take(3)
        .map(|(_, k)| k)
        .collect()
}

/// A hint that names the closest known values, or lists them all when few.
pub fn unknown_name_hint<'a>(
    what: &str,
    wanted: &str,
    known: impl IntoIterator<Item = &'a str> + Clone,
) -> String {
    let near = closest(wanted, known.clone());
    let all: Vec<&str> = known.into_iter().collect();
    if !near.is_empty() {
        format!(
            "did you mean {}? (known {what}s: {})",
            near.iter()
                .map(|n| format!("`{n}`"))
                .collect::<Vec<_>>()
                .join(" or "),
            abbreviate(what, &all)
        )
    } else {
        format!("known {what}s: {}", abbreviate(what, &all))
    }
}

fn abbreviate(what: &str, all: &[&str]) -> String {
    if all.is_empty() {
        return "none defined".into();
    }
    let lister = match what {
        "material" => "`rfsite materials` lists them",
        "rule set" => "`rfsite rules` lists them",
        _ => "README.md lists them",
    };
    if all.len() <= 16 {
        all.join(", ")
    } else {
        format!(
            "{}, ... ({} in all; {lister})",
            all[..16].join(", "),
            all.len()
        )
    }
}
