//! Human output through miette, with a `SourceCode` backed by the file's
//! line index so that each finding costs only its own lines.

use crate::finding::{Finding, Severity};
use crate::source::SourceFile;
use miette::{
    Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, MietteError,
    MietteSpanContents, SourceCode, SourceSpan, SpanContents,
};
use std::fmt;

struct Src<'a>(&'a SourceFile);

impl SourceCode for Src<'_> {
    fn read_span<'a>(
        &'a self,
        span: &SourceSpan,
        before: usize,
        after: usize,
    ) -> Result<Box<dyn SpanContents<'a> + 'a>, MietteError> {
        let f = self.0;
        let text = f.text.as_bytes();
        let start = span.offset().min(text.len());
        let end = (span.offset() + span.len()).min(text.len());
        let first = f.line_index(start).saturating_sub(before);
        let last_line = f.line_index(if end > start { end - 1 } else { end });
        let last = (last_line + after).min(f.line_count().saturating_sub(1));
        let s = f.line_start(first);
        let e = f.line_end(last).max(s);
        let data = text.get(s..e).unwrap_or(&[]);
        Ok(Box::new(MietteSpanContents::new_named(
            f.name.clone(),
            data,
            SourceSpan::from((s, e - s)),
            first,
            0,
            last - first + 1,
        )))
    }
}

struct Diag<'a> {
    f: &'a Finding,
    src: Src<'a>,
}

impl fmt::Debug for Diag<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.f.message)
    }
}

impl fmt::Display for Diag<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.f.message)
    }
}

impl std::error::Error for Diag<'_> {}

fn to_span(s: crate::source::Span, len: usize) -> SourceSpan {
    let start = s.start().min(len);
    let end = s.end().min(len).max(start);
    SourceSpan::from((start, end - start))
}

impl Diagnostic for Diag<'_> {
    fn code<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        Some(Box::new(self.f.rule.clone()))
    }
    fn severity(&self) -> Option<miette::Severity> {
        Some(match self.f.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
            Severity::Info => miette::Severity::Advice,
        })
    }
    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        let mut h = self.f.help.clone().unwrap_or_default();
        for r in &self.f.related {
            if let Some(file) = &r.file {
                let (l, c) = file.line_col(r.span.start());
                if !h.is_empty() {
                    h.push('\n');
                }
                h.push_str(&format!("{} ({}:{}:{})", r.label, file.name, l, c));
            }
        }
        if h.is_empty() {
            None
        } else {
            Some(Box::new(h))
        }
    }
    fn source_code(&self) -> Option<&dyn SourceCode> {
        if self.f.file.text.is_empty() {
            None
        } else {
            Some(&self.src)
        }
    }
    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        if self.f.file.text.is_empty() {
            return None;
        }
        let len = self.f.file.text.len();
        let mut v = vec![LabeledSpan::new_primary_with_span(
            if self.f.label.is_empty() {
                None
            } else {
                Some(self.f.label.clone())
            },
            to_span(self.f.span, len),
        )];
        for r in &self.f.related {
            if r.file.is_none() {
                v.push(LabeledSpan::new_with_span(
                    Some(r.label.clone()),
                    to_span(r.span, len),
                ));
            }
        }
        Some(Box::new(v.into_iter()))
    }
}

pub struct Renderer {
    handler: GraphicalReportHandler,
}

impl Renderer {
    pub fn new(color: bool) -> Renderer {
        let theme = if color {
            GraphicalTheme::unicode()
        } else {
            GraphicalTheme::unicode_nocolor()
        };
        Renderer {
            handler: GraphicalReportHandler::new_themed(theme)
                .with_width(100)
                .with_links(false)
                .with_context_lines(1),
        }
    }

    /// ASCII, no colour: the form used in snapshots.
    pub fn plain() -> Renderer {
        Renderer {
            handler: GraphicalReportHandler::new_themed(GraphicalTheme {
                characters: miette::ThemeCharacters::ascii(),
                styles: miette::ThemeStyles::none(),
            })
            .with_width(100)
            .with_links(false)
            .with_context_lines(1),
        }
    }

    pub fn render(&self, f: &Finding) -> String {
        let f = &*super::for_terminal(f);
        let d = Diag {
            f,
            src: Src(&f.file),
        };
        let mut out = String::new();
        if self.handler.render_report(&mut out, &d).is_err() {
            out = format!("{}\n", super::compact(f));
        }
        out
    }
}
