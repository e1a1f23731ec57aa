//! Reading input that may come from a stranger (a netlist in a pull
//! request): the project root that every path a file names must stay in,
//! reads bounded in size and kind, and text made safe for a terminal.
//! `docs/security.md` states the trust model.

use std::borrow::Cow;
use std::io::Read;
use std::path::{Path, PathBuf};

/// The folder every path that a netlist, a configuration or a rule file
/// names must resolve into (after symlinks).
#[derive(Clone, Debug)]
pub struct Root {
    /// Canonical.
    pub dir: PathBuf,
    /// `--allow-outside-root`: paths outside are read anyway.
    pub allow_outside: bool,
}

impl Root {
    /// The nearest folder at or above `start` holding `.git` or `.hg`,
    /// else `start` itself.
    pub fn find(start: &Path) -> Root {
        let start = std::fs::canonicalize(start).unwrap_or_else(|_| start.to_path_buf());
        let mut d: Option<&Path> = Some(&start);
        while let Some(dir) = d {
            if dir.join(".git").exists() || dir.join(".hg").exists() {
                return Root::at(dir);
            }
            d = dir.parent();
        }
        Root::at(&start)
    }

    pub fn at(dir: &Path) -> Root {
        Root {
            dir: std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf()),
            allow_outside: false,
        }
    }

    /// Whether a path resolves inside the root; `Err` says why not. A path
    /// that does not exist is judged by its nearest existing folder (the
    /// read then fails on its own).
    pub fn check(&self, path: &Path) -> Result<(), String> {
        if self.allow_outside {
            return Ok(());
        }
        let abs = if path.is_absolute() {
            path.to_path_buf()
        } else {
            std::env::current_dir().unwrap_or_default().join(path)
        };
        let mut probe: &Path = &abs;
        let resolved = loop {
            match std::fs::canonicalize(probe) {
                Ok(p) => break p,
                Err(_) => match probe.parent() {
                    Some(p) => probe = p,
                    None => break abs.clone(),
                },
            }
        };
        if resolved.starts_with(&self.dir) {
            Ok(())
        } else {
            Err(format!(
                "it resolves outside the project root `{}`{}",
                self.dir.display(),
                if resolved != abs {
                    " (through a symlink or `..`)"
                } else {
                    ""
                }
            ))
        }
    }

    /// Whether a folder is inside the root (configuration discovery stops
    /// at the root).
    pub fn contains_dir(&self, dir: &Path) -> bool {
        std::fs::canonicalize(dir).is_ok_and(|d| d.starts_with(&self.dir))
    }
}

/// Why a bounded read failed.
#[derive(Debug)]
pub enum ReadError {
    Io(std::io::Error),
    NotAFile,
    IsDir,
    TooLarge(u64),
}

/// Read a regular file of at most `limit` bytes: a FIFO, a device or
/// `/dev/zero` is refused before it is read, and no more than `limit + 1`
/// bytes are ever read.
pub fn read_bounded(path: &Path, limit: u64) -> Result<Vec<u8>, ReadError> {
    // one stat decides everything before the file is opened (opening a
    // FIFO would block)
    let meta = std::fs::metadata(path).map_err(ReadError::Io)?;
    if meta.is_dir() {
        return Err(ReadError::IsDir);
    }
    if !meta.is_file() {
        return Err(ReadError::NotAFile);
    }
    if meta.len() > limit {
        return Err(ReadError::TooLarge(meta.len()));
    }
    let f = std::fs::File::open(path).map_err(ReadError::Io)?;
    let mut buf = Vec::with_capacity(meta.len() as usize);
    f.take(limit + 1)
        .read_to_end(&mut buf)
        .map_err(ReadError::Io)?;
    if buf.len() as u64 > limit {
        return Err(ReadError::TooLarge(buf.len() as u64));
    }
    Ok(buf)
}

/// A character a terminal would act on: C0 and C1 controls (tab and
/// newline aside), DEL, and the bidirectional overrides and isolates that
/// can reorder what a reader sees.
pub fn unsafe_char(c: char) -> bool {
    (c.is_control() && c != '\n' && c != '\t')
        || matches!(c, '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' | '\u{061c}')
}

/// Text for a terminal: every unsafe character as `\u{…}`.
pub fn escape(s: &str) -> Cow<'_, str> {
    if !s.chars().any(unsafe_char) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if unsafe_char(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controls_and_bidi_overrides_are_escaped() {
        assert_eq!(escape("ok"), "ok");
        assert_eq!(escape("a\u{1b}[2Jb"), "a\\u{1b}[2Jb");
        assert_eq!(escape("x\u{202e}y"), "x\\u{202e}y");
        assert_eq!(escape("\u{7f}\r"), "\\u{7f}\\u{d}");
        assert_eq!(escape("tab\tand\nline"), "tab\tand\nline");
    }

    #[test]
    fn a_fifo_or_device_is_not_read() {
        assert!(matches!(
            read_bounded(Path::new("/dev/zero"), 1 << 20),
            Err(ReadError::NotAFile)
        ));
    }
}
