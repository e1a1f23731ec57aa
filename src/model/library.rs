//! Parts libraries (YAML): `parts: NAME: {kind: …, key: value}`.

use super::kinds::{KeyType, Kind};
use super::{Origin, Param, ParamValue};
use crate::finding::Finding;
use crate::source::{SourceFile, Span};
use crate::suggest;
use crate::yaml::{self, YamlDoc};
use serde_yaml::Value;
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

#[derive(Debug)]
pub struct LibPart {
    pub name: String,
    pub kind: Kind,
    pub params: Vec<Param>,
    pub file: Arc<SourceFile>,
    pub span: Span,
}

impl LibPart {
    pub fn get(&self, key: &str) -> Option<&Param> {
        self.params.iter().find(|p| p.key == key)
    }
}

#[derive(Debug)]
pub struct Library {
    pub file: Arc<SourceFile>,
    pub parts: HashMap<String, Arc<LibPart>>,
}

const CODE: &str = "library-error";

/// Read a file as UTF-8 text, as an input finding if it cannot be read.
pub fn read_text(path: &Path, shown: &str) -> Result<Arc<SourceFile>, Finding> {
    read_text_limited(path, shown, crate::yaml::MAX_YAML_BYTES as u64)
}

/// Read a text file of at most `limit` bytes: only a regular file, and no
/// more than `limit + 1` bytes of it (a FIFO or `/dev/zero` cannot hang or
/// flood the reader).
pub fn read_text_limited(path: &Path, shown: &str, limit: u64) -> Result<Arc<SourceFile>, Finding> {
    let empty = || SourceFile::new(shown, path, String::new());
    let err = |msg: String| Finding::input("file-error", &empty(), Span::new(0, 0), msg);
    let bytes = crate::trust::read_bounded(path, limit).map_err(|e| match e {
        crate::trust::ReadError::IsDir => err(format!("`{shown}` is a folder, not a file")),
        crate::trust::ReadError::Io(e) => err(format!("cannot read `{shown}`: {}", io_reason(&e))),
        crate::trust::ReadError::NotAFile => err(format!(
            "`{shown}` is not a regular file (a device, a pipe or a socket): it is not read"
        )),
        crate::trust::ReadError::TooLarge(n) => err(format!(
            "`{shown}` is {n} bytes or more; the limit is {limit} bytes"
        )),
    })?;
    text_from_bytes(bytes, path, shown)
}

pub fn io_reason(e: &std::io::Error) -> String {
    match e.kind() {
        std::io::ErrorKind::NotFound => "no such file".to_string(),
        std::io::ErrorKind::PermissionDenied => "permission denied".to_string(),
        _ => e.to_string(),
    }
}

/// Bytes → source file; invalid UTF-8 is a located error. A leading BOM
/// is kept as whitespace so that offsets match the file.
/// Old Mac line endings: a CR not followed by LF ends a line too. (CRLF is
/// read as it is.) The replacement keeps every offset.
fn lone_cr_to_lf(text: String) -> String {
    if !text.contains('\r') {
        return text;
    }
    let b = text.as_bytes();
    let out: Vec<u8> = b
        .iter()
        .enumerate()
        .map(|(i, &c)| {
            if c == b'\r' && b.get(i + 1) != Some(&b'\n') {
                b'\n'
            } else {
                c
            }
        })
        .collect();
    String::from_utf8(out).unwrap_or(text)
}

pub fn text_from_bytes(
    bytes: Vec<u8>,
    path: &Path,
    shown: &str,
) -> Result<Arc<SourceFile>, Finding> {
    match String::from_utf8(bytes) {
        Ok(text) => Ok(SourceFile::new(shown, path, lone_cr_to_lf(text))),
        Err(e) => {
            let valid = e.utf8_error().valid_up_to();
            let bytes = e.into_bytes();
            let prefix = String::from_utf8_lossy(bytes.get(..valid).unwrap_or(&[])).into_owned();
            let f = SourceFile::new(shown, path, prefix);
            let at = valid;
            Err(Finding::input(
                "file-error",
                &f,
                Span::new(at, at),
                format!("file is not UTF-8 text: invalid byte at offset {valid}"),
            )
            .label("here")
            .help("save the file as UTF-8, or check that it is a text file"))
        }
    }
}

/// A library, or every error that stops it loading.
type Loaded = Result<Arc<Library>, Vec<Finding>>;

/// Libraries shared between the files of one run.
#[derive(Default)]
pub struct LibraryCache {
    map: Mutex<HashMap<PathBuf, Loaded>>,
}

impl LibraryCache {
    pub fn load(&self, path: &Path, shown: &str) -> Result<Arc<Library>, Vec<Finding>> {
        let key = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
        if let Ok(map) = self.map.lock()
            && let Some(l) = map.get(&key)
        {
            return l.clone();
        }
        let result = match read_text(path, shown) {
            Ok(file) => load_library(&file).map(Arc::new),
            Err(f) => Err(vec![f]),
        };
        if let Ok(mut map) = self.map.lock() {
            map.insert(key, result.clone());
        }
        result
    }
}

/// Parse and check a library file. All its errors are reported at once.
pub fn load_library(file: &Arc<SourceFile>) -> Result<Library, Vec<Finding>> {
    let doc = yaml::parse(file, CODE).map_err(|e| vec![e])?;
    let mut errors = Vec::new();
    let mut parts = HashMap::new();
    let root = match &doc.root {
        Value::Mapping(m) => m,
        Value::Null => {
            return Ok(Library {
                file: file.clone(),
                parts,
            });
        }
        other => {
            return Err(vec![Finding::input(
                CODE,
                &yaml::unquoted(file),
                Span::new(0, 0),
                format!(
                    "`{}` is not a parts library (a mapping with a `parts` key): found {}",
                    file.name,
                    yaml::describe(other)
                ),
            )]);
        }
    };
    // a mapping without `parts` is some other file: it is not quoted
    if !root
        .keys()
        .any(|k| yaml::scalar_text(k).as_deref() == Some("parts"))
    {
        return Err(vec![
            Finding::input(
                CODE,
                &yaml::unquoted(file),
                Span::new(0, 0),
                format!(
                    "`{}` is not a parts library: it has no `parts` key",
                    file.name
                ),
            )
            .help("a parts library starts with `parts:` and names each part under it"),
        ]);
    }
    for (k, v) in root {
        let key = yaml::scalar_text(k).unwrap_or_default();
        if key != "parts" {
            let hint = suggest::did_you_mean(&key, ["parts"]);
            errors.push(
                Finding::input(
                    CODE,
                    file,
                    doc.key_span(&yaml::child("", &key)),
                    format!("unknown key `{key}` in a parts library"),
                )
                .label("unknown key")
                .help(if hint.is_empty() {
                    "the only top-level key is `parts`".to_string()
                } else {
                    hint
                }),
            );
            continue;
        }
        let Value::Mapping(pm) = v else {
            if !v.is_null() {
                errors.push(Finding::input(
                    CODE,
                    file,
                    doc.key_span("parts"),
                    format!(
                        "`parts` must be a mapping of part names, found {}",
                        yaml::describe(v)
                    ),
                ));
            }
            continue;
        };
        for (name, body) in pm {
            let Some(name) = yaml::scalar_text(name) else {
                errors.push(Finding::input(
                    CODE,
                    file,
                    doc.key_span("parts"),
                    "a part name must be a plain name",
                ));
                continue;
            };
            match load_part(&doc, &name, body) {
                Ok(p) => {
                    parts.insert(name, Arc::new(p));
                }
                Err(mut e) => errors.append(&mut e),
            }
        }
    }
    if errors.is_empty() {
        Ok(Library {
            file: file.clone(),
            parts,
        })
    } else {
        Err(errors)
    }
}

fn load_part(doc: &YamlDoc, name: &str, body: &Value) -> Result<LibPart, Vec<Finding>> {
    let file = &doc.file;
    let path = yaml::child("parts", name);
    let span = doc.key_span(&path);
    let Value::Mapping(m) = body else {
        return Err(vec![Finding::input(
            CODE,
            file,
            span,
            format!(
                "part `{name}` must be a mapping of ratings, found {}",
                yaml::describe(body)
            ),
        )]);
    };
    let mut errors = Vec::new();
    let kind_v = m.get("kind");
    let kind = match kind_v.and_then(yaml::scalar_text) {
        Some(k) => match Kind::from_name(&k) {
            Some(kind) => Some(kind),
            None => {
                let hint = suggest::did_you_mean(&k, Kind::ALL.iter().map(|k| k.name()));
                errors.push(
                    Finding::input(
                        CODE,
                        file,
                        doc.value_span(&yaml::child(&path, "kind")),
                        format!("unknown kind `{k}` for part `{name}`"),
                    )
                    .label("unknown kind")
                    .help(if hint.is_empty() {
                        format!(
                            "known kinds: {}",
                            Kind::ALL
                                .iter()
                                .map(|k| k.name())
                                .collect::<Vec<_>>()
                                .join(", ")
                        )
                    } else {
                        hint
                    }),
                );
                None
            }
        },
        None => {
            errors.push(
                Finding::input(CODE, file, span, format!("part `{name}` has no `kind`"))
                    .label("this part")
                    .help("add `kind: nmos` (or another kind) to the part"),
            );
            None
        }
    };
    let Some(kind) = kind else {
        return Err(errors);
    };
    let mut params = Vec::new();
    for (k, v) in m {
        let key = yaml::scalar_text(k).unwrap_or_default();
        if key == "kind" {
            continue;
        }
        let kpath = yaml::child(&path, &key);
        let Some(def) = kind.key(&key) else {
            let hint = suggest::did_you_mean(&key, kind.keys().iter().map(|k| k.name));
            errors.push(
                Finding::input(
                    CODE,
                    file,
                    doc.key_span(&kpath),
                    format!("unknown key `{key}` for a {} part", kind.name()),
                )
                .label("unknown key")
                .help(if hint.is_empty() {
                    format!(
                        "keys of a {}: {}",
                        kind.name(),
                        kind.keys()
                            .iter()
                            .map(|k| k.name)
                            .collect::<Vec<_>>()
                            .join(" ")
                    )
                } else {
                    hint
                }),
            );
            continue;
        };
        let vspan = doc.value_span(&kpath);
        let text = match yaml::quantity_text(doc, &kpath, v) {
            Ok(Some(t)) => t,
            Ok(None) => {
                errors.push(Finding::input(
                    CODE,
                    file,
                    vspan,
                    format!(
                        "`{key}` must be a single value, found {}",
                        yaml::describe(v)
                    ),
                ));
                continue;
            }
            Err(msg) => {
                errors.push(
                    Finding::input(CODE, file, vspan, format!("`{key}`: {msg}"))
                        .label("not a decimal number"),
                );
                continue;
            }
        };
        match super::interpret_key(def.name, def.ty, &text) {
            Ok(value) => params.push(Param {
                key: def.name,
                value,
                origin: Origin::Library,
                span: vspan,
            }),
            Err(msg) => errors.push(
                Finding::input(CODE, file, vspan, format!("`{key}`: {msg}")).label(match def.ty {
                    KeyType::Q(d) => format!("expected {}", d.article_name()),
                    KeyType::DeltaT => "expected a temperature".to_string(),
                    KeyType::Word => "expected a word".to_string(),
                }),
            ),
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    // the `type` of a diode decides some defaults; keep it lowercase
    for p in &mut params {
        if let ParamValue::Word(w) = &mut p.value {
            *w = w.to_lowercase();
        }
    }
    Ok(LibPart {
        name: name.to_string(),
        kind,
        params,
        file: file.clone(),
        span,
    })
}
