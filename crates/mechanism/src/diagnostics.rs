//! Problems found in input files, each located at file:line:column.

use crate::SourceLocation;
use std::fmt;

/// How serious a problem is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// Suspicious but usable input (for example a species never used).
    Warning,
    /// Input that cannot be used.
    Error,
}

/// One problem in an input file.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostic {
    /// Error or warning.
    pub severity: Severity,
    /// The file as the user named it (or a label such as `<string>`).
    pub file: String,
    /// Where in the file, when known.
    pub location: Option<SourceLocation>,
    /// What is wrong, naming the offending item and what was expected.
    pub message: String,
    /// A suggestion (a near-miss name, the expected unit), when there is one.
    pub help: Option<String>,
}

impl Diagnostic {
    /// An error at `location` of `file`.
    pub fn error(file: &str, location: Option<SourceLocation>, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Error,
            file: file.to_string(),
            location,
            message: message.into(),
            help: None,
        }
    }

    /// A warning at `location` of `file`.
    pub fn warning(
        file: &str,
        location: Option<SourceLocation>,
        message: impl Into<String>,
    ) -> Self {
        Diagnostic {
            severity: Severity::Warning,
            ..Diagnostic::error(file, location, message)
        }
    }

    /// The same diagnostic with a suggestion attached.
    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let kind = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        match self.location {
            Some(loc) => write!(
                f,
                "{}:{}:{}: {kind}: {}",
                self.file, loc.line, loc.column, self.message
            )?,
            None => write!(f, "{}: {kind}: {}", self.file, self.message)?,
        }
        if let Some(help) = &self.help {
            write!(f, "\n  help: {help}")?;
        }
        Ok(())
    }
}

/// All problems found in one load, in file order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Diagnostics(pub Vec<Diagnostic>);

impl Diagnostics {
    /// Number of errors.
    pub fn error_count(&self) -> usize {
        self.0
            .iter()
            .filter(|d| d.severity == Severity::Error)
            .count()
    }

    /// Number of warnings.
    pub fn warning_count(&self) -> usize {
        self.0
            .iter()
            .filter(|d| d.severity == Severity::Warning)
            .count()
    }

    /// Whether any diagnostic is an error.
    pub fn has_errors(&self) -> bool {
        self.error_count() > 0
    }

    /// Adds one diagnostic.
    pub fn push(&mut self, diagnostic: Diagnostic) {
        self.0.push(diagnostic);
    }

    /// Iterates over the diagnostics.
    pub fn iter(&self) -> impl Iterator<Item = &Diagnostic> {
        self.0.iter()
    }
}

impl fmt::Display for Diagnostics {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for d in &self.0 {
            writeln!(f, "{d}")?;
        }
        write!(
            f,
            "{} error(s), {} warning(s)",
            self.error_count(),
            self.warning_count()
        )
    }
}

/// A file could not be loaded; `diagnostics` holds every problem found (errors and warnings).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LoadError {
    /// The file could not be read at all.
    #[error("{file}: cannot read file: {reason}")]
    Io {
        /// The path as given.
        file: String,
        /// The operating system's message.
        reason: String,
    },
    /// The file was read but has problems.
    #[error("{diagnostics}")]
    Invalid {
        /// Every problem found, errors and warnings, in file order.
        diagnostics: Diagnostics,
    },
}
