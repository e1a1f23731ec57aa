//! The one diagnostic type of armature.
//!
//! Input errors (syntax, bad values, unknown keys), structure and physics
//! findings and team-rule findings are all a `Finding`; the report stage
//! renders them in every output format.

use crate::source::{SourceFile, Span};
use std::fmt;
use std::sync::Arc;

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    Info,
    Warning,
    Error,
}

impl Severity {
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Info => "info",
            Severity::Warning => "warning",
            Severity::Error => "error",
        }
    }
    pub fn parse(s: &str) -> Option<Severity> {
        match s {
            "info" => Some(Severity::Info),
            "warning" => Some(Severity::Warning),
            "error" => Some(Severity::Error),
            _ => None,
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Whether a finding is about the design (exit 1) or about input that
/// could not be checked (exit 2).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Class {
    /// A design-rule finding, from a built-in or a team rule.
    Rule,
    /// The input could not be read or understood.
    Input,
}

/// A secondary location.
#[derive(Clone, Debug)]
pub struct Related {
    /// `None`: the finding's own file.
    pub file: Option<Arc<SourceFile>>,
    pub span: Span,
    pub label: String,
}

#[derive(Clone, Debug)]
pub struct Finding {
    pub rule: String,
    pub severity: Severity,
    pub class: Class,
    pub file: Arc<SourceFile>,
    pub span: Span,
    pub label: String,
    pub message: String,
    pub help: Option<String>,
    pub related: Vec<Related>,
    /// Designators involved, the offending one first.
    pub parts: Vec<String>,
}

impl Finding {
    pub fn new(
        rule: impl Into<String>,
        severity: Severity,
        file: &Arc<SourceFile>,
        span: Span,
        message: impl Into<String>,
    ) -> Finding {
        Finding {
            rule: rule.into(),
            severity,
            class: Class::Rule,
            file: file.clone(),
            span,
            label: String::new(),
            message: message.into(),
            help: None,
            related: Vec::new(),
            parts: Vec::new(),
        }
    }

    /// An input error: the file could not be checked.
    pub fn input(
        rule: &str,
        file: &Arc<SourceFile>,
        span: Span,
        message: impl Into<String>,
    ) -> Finding {
        let mut f = Finding::new(rule, Severity::Error, file, span, message);
        f.class = Class::Input;
        f
    }

    pub fn label(mut self, label: impl Into<String>) -> Finding {
        self.label = label.into();
        self
    }

    pub fn help(mut self, help: impl Into<String>) -> Finding {
        self.help = Some(help.into());
        self
    }

    pub fn related(mut self, span: Span, label: impl Into<String>) -> Finding {
        self.related.push(Related {
            file: None,
            span,
            label: label.into(),
        });
        self
    }

    pub fn related_in(
        mut self,
        file: &Arc<SourceFile>,
        span: Span,
        label: impl Into<String>,
    ) -> Finding {
        self.related.push(Related {
            file: Some(file.clone()),
            span,
            label: label.into(),
        });
        self
    }

    pub fn parts<I, S>(mut self, parts: I) -> Finding
    where
        I: IntoIterator<Item = S>,
        S: Into<String>,
    {
        self.parts = parts.into_iter().map(Into::into).collect();
        self
    }

    pub fn line_col(&self) -> (usize, usize) {
        self.file.line_col(self.span.start())
    }
}
