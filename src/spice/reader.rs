//! Reading a SPICE deck: logical lines, the line grammar, `.include` and
//! `.lib`, `.subckt` definitions flattened into elements, `.param`
//! arithmetic and `.model` cards.

use super::mapping::Mapping;
use super::number::{self, Scope};
use super::{ERROR, Loc};
use crate::fasthash::{FastMap as HashMap, FastSet as HashSet};
use crate::finding::{Finding, Severity};
use crate::source::{SourceFile, Span};
use pest::Parser;
use pest::iterators::Pair;
use pest_derive::Parser;
use std::path::{Path, PathBuf};
use std::sync::Arc;

#[derive(Parser)]
#[grammar = "../grammar/spice.pest"]
struct SpiceParser;

/// The longest logical line accepted, in bytes (as for `.drive`).
pub const MAX_LINE_BYTES: usize = crate::syntax::MAX_LINE_BYTES;
/// How deep `.include` and `.lib` may nest.
pub const MAX_INCLUDE_DEPTH: usize = 16;
/// How deep subcircuit instances may nest.
pub const MAX_SUBCKT_DEPTH: usize = 32;

/// An item of a line, as the grammar reads it.
#[derive(Clone, Debug)]
pub enum ItemKind {
    Word(String),
    /// `key=value`.
    Assign(String, Box<Item>),
    /// `HEAD(items)`.
    Group(Option<String>, Vec<Item>),
    /// `{expr}` or `'expr'`.
    Braced(String),
    /// `"path"`.
    Quoted(String),
}

#[derive(Clone, Debug)]
pub struct Item {
    pub kind: ItemKind,
    pub span: Span,
}

impl Item {
    fn word(&self) -> Option<&str> {
        match &self.kind {
            ItemKind::Word(w) => Some(w),
            _ => None,
        }
    }
}

/// `armature: allow …` found in a SPICE comment.
#[derive(Clone, Debug)]
pub struct Allow {
    /// The comment's text from `armature:` on.
    pub text: String,
    pub loc: Loc,
}

/// One logical line.
#[derive(Clone, Debug)]
pub struct Card {
    pub file: usize,
    pub span: Span,
    pub items: Vec<Item>,
    pub allow: Vec<Allow>,
}

impl Card {
    fn loc(&self, span: Span) -> Loc {
        Loc {
            file: self.file,
            span,
        }
    }
    fn head(&self) -> &str {
        self.items.first().and_then(Item::word).unwrap_or("")
    }
}

/// A `.model` card.
#[derive(Clone, Debug)]
pub struct Model {
    pub name: String,
    /// `NMOS`, `PMOS`, `NPN`, `PNP`, `D`, `VDMOS`, … as written.
    pub kind: String,
    /// Parameters in lower case, values as written.
    pub params: Vec<(String, String)>,
    pub loc: Loc,
}

impl Model {
    pub fn param(&self, key: &str) -> Option<&str> {
        self.params
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.as_str())
    }
}

/// A flattened element.
#[derive(Clone, Debug)]
pub struct Element {
    /// Upper-case element letter.
    pub letter: u8,
    /// Flattened designator (`X1.R5`).
    pub name: String,
    pub name_loc: Loc,
    /// The whole element line.
    pub line: Loc,
    /// Nets (flattened, spelled as at their first use) and where each is.
    pub nodes: Vec<(String, Loc)>,
    /// The value of R C L (and the DC value of V I).
    pub value: Option<(number::Number, Loc)>,
    /// The model of D M Q, the subcircuit of X.
    pub model: Option<(String, Loc)>,
    /// The instance lines it sits inside, outermost first, with each
    /// instance's designator.
    pub via: Vec<(String, Loc)>,
    pub allow: Vec<Allow>,
}

struct Subckt {
    name: String,
    ports: Vec<String>,
    defaults: Vec<(String, Item)>,
    body: Vec<Card>,
    loc: Loc,
}

/// What reading a deck gives.
pub struct Deck {
    pub title: String,
    pub files: Vec<Arc<SourceFile>>,
    pub elements: Vec<Element>,
    pub models: HashMap<String, Model>,
    /// Notes and warnings that do not stop the check.
    pub notes: Vec<Finding>,
}

pub struct Reader<'m> {
    pub files: Vec<Arc<SourceFile>>,
    pub errors: Vec<Finding>,
    pub notes: Vec<Finding>,
    root: Option<&'m crate::trust::Root>,
    map: &'m Mapping,
    /// Dot cards already noted as ignored, once each.
    noted: HashSet<String>,
    max_elements: usize,
}

fn item_of(p: Pair<Rule>, base: usize) -> Option<Item> {
    let s = p.as_span();
    let span = Span::new(base + s.start(), base + s.end());
    let kind = match p.as_rule() {
        Rule::word => ItemKind::Word(p.as_str().to_string()),
        Rule::braced => ItemKind::Braced(
            p.into_inner()
                .next()
                .map(|q| q.as_str().to_string())
                .unwrap_or_default(),
        ),
        Rule::quoted => ItemKind::Quoted(
            p.into_inner()
                .next()
                .map(|q| q.as_str().to_string())
                .unwrap_or_default(),
        ),
        Rule::assign => {
            let mut it = p.into_inner().filter(|q| q.as_rule() != Rule::equals);
            let k = it.next()?.as_str().to_string();
            let v = item_of(it.next()?, base)?;
            ItemKind::Assign(k, Box::new(v))
        }
        Rule::group => {
            let mut head = None;
            let mut items = Vec::new();
            for q in p.into_inner() {
                match q.as_rule() {
                    Rule::lparen | Rule::rparen => {}
                    Rule::word if head.is_none() && items.is_empty() => {
                        head = Some(q.as_str().to_string())
                    }
                    _ => items.extend(item_of(q, base)),
                }
            }
            ItemKind::Group(head, items)
        }
        _ => return None,
    };
    Some(Item { kind, span })
}

/// A line of plain words (no `=`, parentheses, braces or quotes: most
/// element lines) read without the grammar, as the grammar would read it:
/// words separated by blanks and commas. `None` for any other line.
pub fn plain_words(buf: &str, base: usize) -> Option<Vec<Item>> {
    let b = buf.as_bytes();
    if b.iter()
        .any(|c| matches!(c, b'=' | b'(' | b')' | b'{' | b'}' | b'"' | b'\''))
    {
        return None;
    }
    let sep = |c: &u8| matches!(c, b' ' | b'\t' | b'\r' | b'\n' | b',');
    let mut items = Vec::with_capacity(8);
    let mut i = 0;
    while i < b.len() {
        i += b
            .get(i..)
            .map_or(0, |r| r.iter().take_while(|c| sep(c)).count());
        let start = i;
        i += b
            .get(i..)
            .map_or(0, |r| r.iter().take_while(|c| !sep(c)).count());
        if i > start {
            items.push(Item {
                kind: ItemKind::Word(buf.get(start..i)?.to_string()),
                span: Span::new(base + start, base + i),
            });
        }
    }
    Some(items)
}

/// Where an end-of-line comment starts (`;` anywhere, `$` after a blank
/// and before one or the end), outside double quotes.
fn comment_start(line: &str) -> Option<usize> {
    let b = line.as_bytes();
    let mut quoted = false;
    for (i, &c) in b.iter().enumerate() {
        match c {
            b'"' => quoted = !quoted,
            b';' if !quoted => return Some(i),
            b'$' if !quoted => {
                let before = i == 0 || matches!(b.get(i.wrapping_sub(1)), Some(b' ' | b'\t'));
                let after = matches!(b.get(i + 1), None | Some(b' ' | b'\t' | b'\r'));
                if before && after {
                    return Some(i);
                }
            }
            _ => {}
        }
    }
    None
}

/// The `armature: …` part of a comment, if any.
fn allow_in(comment: &str, offset: usize, file: usize) -> Option<Allow> {
    let at = comment.find("armature:")?;
    let text = comment[at..].trim_end().to_string();
    Some(Allow {
        loc: Loc {
            file,
            span: Span::new(offset + at, offset + at + text.len()),
        },
        text,
    })
}

impl<'m> Reader<'m> {
    pub fn new(
        map: &'m Mapping,
        root: Option<&'m crate::trust::Root>,
        max_elements: usize,
    ) -> Reader<'m> {
        Reader {
            files: Vec::new(),
            errors: Vec::new(),
            notes: Vec::new(),
            root,
            map,
            noted: HashSet::default(),
            max_elements,
        }
    }

    fn err(&mut self, loc: Loc, msg: String, label: &str, help: Option<String>) {
        let file = self.file(loc.file);
        let mut f = Finding::input(ERROR, &file, loc.span, msg).label(label);
        if let Some(h) = help {
            f = f.help(h);
        }
        self.errors.push(f);
    }

    fn note(&mut self, key: &str, loc: Loc, msg: String) {
        if self.noted.insert(key.to_ascii_lowercase()) {
            let file = self.file(loc.file);
            self.notes.push(
                Finding::new(super::IGNORED, Severity::Info, &file, loc.span, msg)
                    .label("not checked"),
            );
        }
    }

    pub fn file(&self, i: usize) -> Arc<SourceFile> {
        self.files
            .get(i)
            .cloned()
            .unwrap_or_else(|| SourceFile::from_str("", ""))
    }

    /// Split a file into logical lines and parse each. `section`: read
    /// only the lines between `.lib SECTION` and `.endl`.
    fn cards_of(
        &mut self,
        fi: usize,
        top: bool,
        section: Option<&str>,
        stack: &mut Vec<PathBuf>,
        out: &mut Vec<Card>,
    ) {
        let file = self.file(fi);
        let text = file.text.as_str();
        // (start offset, buffer, allows) of the logical line being built
        let mut cur: Option<(usize, String, Vec<Allow>)> = None;
        let mut pending: Vec<Allow> = Vec::new();
        let mut logical: Vec<(usize, String, Vec<Allow>)> = Vec::new();
        let mut offset = 0usize;
        let mut first = top;
        let mut in_control = false;
        for raw in text.split_inclusive('\n') {
            let start = offset;
            offset += raw.len();
            let line = raw.trim_end_matches(['\n', '\r']);
            if first {
                // the title line
                first = false;
                continue;
            }
            let trimmed = line.trim_start();
            let lead = line.len() - trimmed.len();
            if in_control {
                if trimmed
                    .get(..5)
                    .is_some_and(|h| h.eq_ignore_ascii_case(".endc"))
                {
                    in_control = false;
                }
                continue;
            }
            if trimmed.is_empty() {
                continue;
            }
            if trimmed.starts_with('*') {
                if let Some(a) = allow_in(trimmed, start + lead, fi) {
                    pending.push(a);
                }
                continue;
            }
            if trimmed
                .get(..8)
                .is_some_and(|h| h.eq_ignore_ascii_case(".control"))
            {
                in_control = true;
                let loc = Loc {
                    file: fi,
                    span: Span::new(start + lead, start + line.len()),
                };
                self.note(
                    ".control",
                    loc,
                    "a `.control` block is simulator commands: not checked".into(),
                );
                continue;
            }
            let (content, comment) = match comment_start(line) {
                Some(c) => (&line[..c], Some((c, &line[c..]))),
                None => (line, None),
            };
            let continues = trimmed.starts_with('+');
            let mut allows = Vec::new();
            if let Some((c, t)) = comment {
                allows.extend(allow_in(t, start + c, fi));
            }
            match (&mut cur, continues) {
                (Some((s, buf, al)), true) => {
                    // pad to this line's start, then its text without `+`
                    let pad = (start - *s).saturating_sub(buf.len());
                    buf.extend(std::iter::repeat_n(' ', pad));
                    buf.push_str(&" ".repeat(lead + 1));
                    buf.push_str(content.get(lead + 1..).unwrap_or(""));
                    al.append(&mut allows);
                }
                _ => {
                    if let Some(done) = cur.take() {
                        logical.push(done);
                    }
                    let mut al = std::mem::take(&mut pending);
                    al.append(&mut allows);
                    if continues {
                        // a `+` with nothing before it: read as a line
                        let mut b = " ".repeat(lead + 1);
                        b.push_str(content.get(lead + 1..).unwrap_or(""));
                        cur = Some((start, b, al));
                    } else {
                        cur = Some((start, content.to_string(), al));
                    }
                }
            }
        }
        if let Some(done) = cur.take() {
            logical.push(done);
        }
        let mut in_section = section.is_none();
        for (start, buf, allow) in logical {
            let span = Span::new(start, start + buf.trim_end().len());
            let loc = Loc { file: fi, span };
            if buf.len() > MAX_LINE_BYTES {
                self.err(
                    Loc {
                        file: fi,
                        span: Span::new(start, start + 1),
                    },
                    format!(
                        "a line of {} bytes; the limit is {MAX_LINE_BYTES} bytes",
                        buf.len()
                    ),
                    "this line",
                    Some("split the line with `+` continuation lines".into()),
                );
                continue;
            }
            let parsed = match plain_words(&buf, start) {
                Some(words) => Ok(words),
                None => SpiceParser::parse(Rule::line, &buf).map(|mut pairs| {
                    pairs
                        .next()
                        .map(|l| {
                            l.into_inner()
                                .filter_map(|p| item_of(p, start))
                                .collect::<Vec<_>>()
                        })
                        .unwrap_or_default()
                }),
            };
            let items = match parsed {
                Ok(items) => items,
                Err(e) => {
                    let at = match e.location {
                        pest::error::InputLocation::Pos(p) => p,
                        pest::error::InputLocation::Span((p, _)) => p,
                    };
                    let ch = buf.get(at..).and_then(|s| s.chars().next());
                    self.errors.push(
                        Finding::input(
                            "parse-error",
                            &file,
                            Span::new(start + at, start + at + ch.map_or(0, char::len_utf8)),
                            match ch {
                                Some(c) => format!("unexpected `{c}` in a SPICE line"),
                                None => "this SPICE line ends too early".into(),
                            },
                        )
                        .label("here")
                        .help("parentheses, braces and quotes must pair up on the line (and its `+` continuations)"),
                    );
                    continue;
                }
            };
            let card = Card {
                file: fi,
                span,
                items,
                allow,
            };
            let head = card.head().to_ascii_lowercase();
            if let Some(sec) = section {
                if head == ".lib" && card.items.len() == 2 {
                    let name = card.items.get(1).and_then(Item::word).unwrap_or("");
                    in_section = name.eq_ignore_ascii_case(sec);
                    continue;
                }
                if head == ".endl" {
                    in_section = false;
                    continue;
                }
                if !in_section {
                    continue;
                }
            }
            match head.as_str() {
                ".end" if top => return,
                ".include" | ".inc" | ".lib" => {
                    if section.is_none() && head == ".lib" && card.items.len() == 2 && !top {
                        // a section marker in a file included whole
                        continue;
                    }
                    self.include(&card, loc, stack, out);
                }
                ".endl" => {}
                _ => out.push(card),
            }
        }
    }

    fn include(&mut self, card: &Card, loc: Loc, stack: &mut Vec<PathBuf>, out: &mut Vec<Card>) {
        let head = card.head().to_ascii_lowercase();
        let Some(target) = card.items.get(1) else {
            self.err(loc, format!("`{head}` names no file"), "here", None);
            return;
        };
        let name = match &target.kind {
            ItemKind::Word(w) | ItemKind::Quoted(w) => w.clone(),
            _ => {
                self.err(
                    card.loc(target.span),
                    format!("`{head}` takes a file path"),
                    "here",
                    None,
                );
                return;
            }
        };
        let section = if head == ".lib" {
            card.items.get(2).and_then(Item::word).map(str::to_string)
        } else {
            None
        };
        let tloc = card.loc(target.span);
        if stack.len() > MAX_INCLUDE_DEPTH {
            self.err(
                tloc,
                format!("includes nest deeper than {MAX_INCLUDE_DEPTH} files"),
                "here",
                None,
            );
            return;
        }
        let including = self.file(card.file);
        let base = including
            .path
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default();
        let path = base.join(&name);
        if let Some(Err(why)) = self.root.map(|r| r.check(&path)) {
            self.err(
                tloc,
                format!("`{name}` is not read: {why}"),
                "outside the project",
                Some("keep included files inside the project, or pass `--allow-outside-root` for a netlist you trust".into()),
            );
            return;
        }
        let canon = std::fs::canonicalize(&path).unwrap_or_else(|_| path.clone());
        if stack.contains(&canon) {
            self.err(
                tloc,
                format!("`{name}` includes itself (through {} files)", stack.len()),
                "include loop",
                Some("remove the `.include` that leads back to a file already being read".into()),
            );
            return;
        }
        let shown = crate::shown_path(&path);
        let text = match crate::read_netlist(&path, &shown) {
            Ok(f) => f,
            Err(e) => {
                self.err(
                    tloc,
                    format!("`{name}` cannot be read: {}", e.message),
                    "this file",
                    Some(format!(
                        "the path is relative to the including file's folder: {shown}"
                    )),
                );
                return;
            }
        };
        self.files.push(text);
        let fi = self.files.len() - 1;
        stack.push(canon);
        self.cards_of(fi, false, section.as_deref(), stack, out);
        stack.pop();
    }

    /// Read the deck of `file` and flatten it.
    pub fn read(mut self, file: &Arc<SourceFile>) -> Result<Deck, Vec<Finding>> {
        self.files.push(file.clone());
        let title = file.text.lines().next().unwrap_or("").trim().to_string();
        let mut cards = Vec::new();
        let canon = std::fs::canonicalize(&file.path).unwrap_or_else(|_| file.path.clone());
        self.cards_of(0, true, None, &mut vec![canon], &mut cards);
        // definitions, models, parameters, the top-level elements
        let mut subckts: HashMap<String, Subckt> = HashMap::default();
        let mut models: HashMap<String, Model> = HashMap::default();
        let mut global = Scope::new();
        let mut globals: HashSet<String> = ["0".to_string()].into_iter().collect();
        for g in &self.map.ground {
            globals.insert(g.to_ascii_lowercase());
        }
        let mut top: Vec<Card> = Vec::new();
        let mut open: Vec<Subckt> = Vec::new();
        for card in cards {
            let head = card.head().to_ascii_lowercase();
            let loc = card.loc(card.span);
            match head.as_str() {
                ".subckt" => {
                    let words: Vec<&Item> = card.items.iter().skip(1).collect();
                    let Some(name) = words.first().and_then(|i| i.word()) else {
                        self.err(loc, "`.subckt` names no subcircuit".into(), "here", None);
                        continue;
                    };
                    let mut ports = Vec::new();
                    let mut defaults = Vec::new();
                    for it in words.iter().skip(1) {
                        match &it.kind {
                            ItemKind::Word(w) if w.eq_ignore_ascii_case("params:") => {}
                            ItemKind::Word(w) => ports.push(w.clone()),
                            ItemKind::Assign(k, v) => {
                                defaults.push((k.to_ascii_lowercase(), (**v).clone()))
                            }
                            _ => {}
                        }
                    }
                    open.push(Subckt {
                        name: name.to_string(),
                        ports,
                        defaults,
                        body: Vec::new(),
                        loc,
                    });
                }
                ".ends" => match open.pop() {
                    Some(s) => {
                        subckts.insert(s.name.to_ascii_lowercase(), s);
                    }
                    None => self.err(
                        loc,
                        "`.ends` without a `.subckt` before it".into(),
                        "nothing to end",
                        None,
                    ),
                },
                _ if !open.is_empty() => {
                    if let Some(s) = open.last_mut() {
                        s.body.push(card);
                    }
                }
                ".model" => {
                    if let Some(m) = self.model(&card, &global) {
                        models.insert(m.name.to_ascii_lowercase(), m);
                    }
                }
                ".param" => self.params(&card, &mut global),
                ".global" => {
                    for it in card.items.iter().skip(1) {
                        if let Some(w) = it.word() {
                            globals.insert(w.to_ascii_lowercase());
                        }
                    }
                }
                h if h.starts_with('.') => {
                    self.note(
                        h,
                        loc,
                        format!("`{}` is a simulator command: not checked", card.head()),
                    );
                }
                _ => top.push(card),
            }
        }
        for s in open {
            self.err(
                s.loc,
                format!("`.subckt {}` has no `.ends`", s.name),
                "opened here",
                Some("end the definition with `.ends`".into()),
            );
        }
        // models inside subcircuits are global too (they name parts)
        let inner: Vec<Card> = subckts
            .values()
            .flat_map(|s| {
                s.body
                    .iter()
                    .filter(|c| c.head().eq_ignore_ascii_case(".model"))
                    .cloned()
            })
            .collect();
        for c in inner {
            if let Some(m) = self.model(&c, &global) {
                models.entry(m.name.to_ascii_lowercase()).or_insert(m);
            }
        }
        if !self.errors.is_empty() {
            return Err(self.errors);
        }
        // how many elements the deck flattens to, counted before any is
        // made: a few lines of nested instances can stand for billions
        let mut memo: HashMap<String, u64> = HashMap::default();
        let mut total = 0u64;
        for card in &top {
            total = total.saturating_add(self.count(card, &subckts, &mut memo, &mut Vec::new()));
            if total > self.max_elements as u64 {
                let loc = card.loc(card.items.first().map_or(card.span, |i| i.span));
                let f = self.file(loc.file);
                self.errors.push(
                    Finding::input(
                        "limit-exceeded",
                        &f,
                        loc.span,
                        format!(
                            "the netlist flattens to more than {} elements (with this line, at least {})",
                            self.max_elements,
                            crate::units::sig3(total as f64)
                        ),
                    )
                    .label("the expansion crosses the limit here")
                    .help("split the design into several netlists"),
                );
                return Err(self.errors);
            }
        }
        let mut fl = Flatten {
            subckts: &subckts,
            models: &models,
            globals: &globals,
            nets: HashMap::default(),
            out: Vec::new(),
            stack: Vec::new(),
            allow: Vec::new(),
            over: false,
        };
        for card in &top {
            if fl.over {
                break;
            }
            self.element(&mut fl, card, "", &HashMap::default(), &global, &[]);
        }
        if !self.errors.is_empty() {
            return Err(self.errors);
        }
        Ok(Deck {
            title,
            files: self.files,
            elements: fl.out,
            models,
            notes: self.notes,
        })
    }

    /// The elements a line stands for once flattened (saturating; a
    /// subcircuit that contains itself counts once, and is reported when
    /// flattened).
    fn count(
        &self,
        card: &Card,
        subckts: &HashMap<String, Subckt>,
        memo: &mut HashMap<String, u64>,
        stack: &mut Vec<String>,
    ) -> u64 {
        let head = card.head();
        if !head
            .as_bytes()
            .first()
            .is_some_and(|c| c.eq_ignore_ascii_case(&b'X'))
        {
            return u64::from(!head.starts_with('.'));
        }
        let sub = card
            .items
            .iter()
            .skip(1)
            .take_while(|i| i.word().is_some())
            .filter(|i| !i.word().is_some_and(|t| t.eq_ignore_ascii_case("params:")))
            .last()
            .and_then(Item::word)
            .unwrap_or("")
            .to_ascii_lowercase();
        if self.map.model(&sub).is_some() || self.map.instance(head).is_some() {
            return 1;
        }
        if let Some(&n) = memo.get(&sub) {
            return n;
        }
        let Some(def) = subckts.get(&sub) else {
            return 1;
        };
        if stack.contains(&sub) || stack.len() > MAX_SUBCKT_DEPTH {
            return 1;
        }
        stack.push(sub.clone());
        let mut n = 0u64;
        for c in &def.body {
            n = n.saturating_add(self.count(c, subckts, memo, stack));
        }
        stack.pop();
        memo.insert(sub, n);
        n
    }

    fn model(&mut self, card: &Card, scope: &Scope) -> Option<Model> {
        let loc = card.loc(card.span);
        let name = card.items.get(1).and_then(Item::word);
        let Some(name) = name else {
            self.err(loc, "`.model` names no model".into(), "here", None);
            return None;
        };
        let mut kind = String::new();
        let mut params = Vec::new();
        let add = |items: &[Item], params: &mut Vec<(String, String)>| {
            for it in items {
                if let ItemKind::Assign(k, v) = &it.kind {
                    let t = match &v.kind {
                        ItemKind::Word(w) => w.clone(),
                        ItemKind::Braced(e) => number::eval(e, scope)
                            .map(|x| format!("{x:e}"))
                            .unwrap_or_default(),
                        _ => String::new(),
                    };
                    params.push((k.to_ascii_lowercase(), t));
                }
            }
        };
        for it in card.items.iter().skip(2) {
            match &it.kind {
                ItemKind::Word(w) if kind.is_empty() => kind = w.clone(),
                ItemKind::Group(h, items) => {
                    if let (Some(h), true) = (h, kind.is_empty()) {
                        kind = h.clone();
                    }
                    add(items, &mut params);
                }
                ItemKind::Assign(..) => add(std::slice::from_ref(it), &mut params),
                _ => {}
            }
        }
        Some(Model {
            name: name.to_string(),
            kind,
            params,
            loc,
        })
    }

    fn params(&mut self, card: &Card, scope: &mut Scope) {
        for it in card.items.iter().skip(1) {
            if let ItemKind::Assign(k, v) = &it.kind {
                match self.eval_item(card, v, scope) {
                    Some(x) => {
                        scope.insert(k.to_ascii_lowercase(), x);
                    }
                    None => return,
                }
            }
        }
    }

    /// A value item's number: a SPICE number or an expression.
    fn eval_item(&mut self, card: &Card, it: &Item, scope: &Scope) -> Option<f64> {
        self.number_of(card, it, scope).map(|n| n.value)
    }

    fn number_of(&mut self, card: &Card, it: &Item, scope: &Scope) -> Option<number::Number> {
        let loc = card.loc(it.span);
        match &it.kind {
            ItemKind::Word(w) => match number::parse(w) {
                Some(n) => Some(n),
                None => match scope.get(&w.to_ascii_lowercase()) {
                    Some(&v) => Some(number::Number {
                        value: v,
                        upper_m: false,
                    }),
                    None => {
                        self.err(
                            loc,
                            format!("`{w}` is not a number"),
                            "not a number",
                            Some("write a number with an optional scale (`10k`, `4.7u`, `1meg`), or an expression in braces".into()),
                        );
                        None
                    }
                },
            },
            ItemKind::Braced(e) => match number::eval(e, scope) {
                Ok(v) => Some(number::Number {
                    value: v,
                    upper_m: false,
                }),
                Err(why) => {
                    self.err(
                        loc,
                        format!("`{{{e}}}` does not evaluate: {why}"),
                        "this expression",
                        None,
                    );
                    None
                }
            },
            ItemKind::Assign(_, v) => self.number_of(card, v, scope),
            _ => {
                self.err(loc, "a value was expected here".into(), "not a value", None);
                None
            }
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn element(
        &mut self,
        fl: &mut Flatten,
        card: &Card,
        prefix: &str,
        ports: &HashMap<String, String>,
        scope: &Scope,
        via: &[(String, Loc)],
    ) {
        let Some(first) = card.items.first() else {
            return;
        };
        let Some(raw) = first.word() else {
            self.err(
                card.loc(first.span),
                "a SPICE line starts with its element's name".into(),
                "here",
                None,
            );
            return;
        };
        let letter = raw.as_bytes().first().map_or(b'?', u8::to_ascii_uppercase);
        let name = format!("{prefix}{raw}");
        let name_loc = card.loc(first.span);
        let line = card.loc(card.span);
        // the words up to the first `key=value`, `(…)` or `{…}`
        let words: Vec<&Item> = card
            .items
            .iter()
            .skip(1)
            .take_while(|i| i.word().is_some())
            .collect();
        let mut el = Element {
            letter,
            name: name.clone(),
            name_loc,
            line,
            nodes: Vec::new(),
            value: None,
            model: None,
            via: via.to_vec(),
            allow: card.allow.clone(),
        };
        let net = |fl: &mut Flatten, it: &Item| -> (String, Loc) {
            let w = it.word().unwrap_or("");
            (fl.net(w, prefix, ports), card.loc(it.span))
        };
        // an element the mapping names takes as many nodes as it has pins
        if let Some(inst) = self.map.instance(&name)
            && (letter != b'X' || inst.pins.len() <= words.len())
        {
            let n = inst.pins.len().min(words.len());
            el.nodes = words.iter().take(n).map(|it| net(fl, it)).collect();
            if n < inst.pins.len() {
                self.err(
                    name_loc,
                    format!(
                        "`{name}` has {n} nodes, but the mapping names {} pins for it",
                        inst.pins.len()
                    ),
                    "this element",
                    None,
                );
                return;
            }
            if matches!(letter, b'R' | b'C' | b'L')
                && let Some(v) = card.items.get(n + 1)
            {
                el.value = self
                    .number_of(card, v, scope)
                    .map(|x| (x, card.loc(v.span)));
            }
            fl.push(el, self);
            return;
        }
        match letter {
            b'R' | b'C' | b'L' => {
                if words.len() < 2 {
                    self.err(
                        name_loc,
                        format!("`{name}` needs two nodes and a value"),
                        "this element",
                        None,
                    );
                    return;
                }
                el.nodes = words.iter().take(2).map(|it| net(fl, it)).collect();
                let Some(v) = card.items.get(3) else {
                    self.err(
                        name_loc,
                        format!("`{name}` has no value"),
                        "this element",
                        None,
                    );
                    return;
                };
                let Some(x) = self.number_of(card, v, scope) else {
                    return;
                };
                el.value = Some((x, card.loc(v.span)));
            }
            b'D' => {
                if words.len() < 3 {
                    self.err(
                        name_loc,
                        format!("`{name}` needs two nodes and a model: `D1 anode cathode MODEL`"),
                        "this element",
                        None,
                    );
                    return;
                }
                el.nodes = words.iter().take(2).map(|it| net(fl, it)).collect();
                el.model = words
                    .get(2)
                    .map(|it| (it.word().unwrap_or("").to_string(), card.loc(it.span)));
            }
            b'M' | b'Q' => {
                let known = |w: &str| {
                    fl.models.contains_key(&w.to_ascii_lowercase()) || self.map.model(w).is_some()
                };
                // `M d g s b model` or `M d g s model`; `Q c b e [sub] model`
                let n = match words.len() {
                    0..=3 => {
                        self.err(
                            name_loc,
                            format!("`{name}` needs three or four nodes and a model"),
                            "this element",
                            None,
                        );
                        return;
                    }
                    4 => 3,
                    _ => {
                        if known(words.get(3).and_then(|w| w.word()).unwrap_or("")) {
                            3
                        } else {
                            4
                        }
                    }
                };
                el.nodes = words.iter().take(3).map(|it| net(fl, it)).collect();
                el.model = words
                    .get(n)
                    .map(|it| (it.word().unwrap_or("").to_string(), card.loc(it.span)));
            }
            b'V' | b'I' => {
                if words.len() < 2 {
                    self.err(
                        name_loc,
                        format!("`{name}` needs two nodes"),
                        "this element",
                        None,
                    );
                    return;
                }
                el.nodes = words.iter().take(2).map(|it| net(fl, it)).collect();
                el.value = self.source_value(card, scope);
            }
            b'X' => {
                self.instance(fl, card, el, &words, prefix, ports, scope);
                return;
            }
            b'K' => {
                self.note("K", line, format!("`{name}` couples inductors: magnetic coupling is not modelled, the inductors are checked alone"));
                return;
            }
            _ => {
                let what = match letter {
                    b'J' => "a JFET",
                    b'E' => "a voltage-controlled voltage source",
                    b'F' => "a current-controlled current source",
                    b'G' => "a voltage-controlled current source",
                    b'H' => "a current-controlled voltage source",
                    b'B' => "a behavioural source",
                    b'S' | b'W' => "a switch",
                    b'T' | b'O' | b'U' | b'Y' => "a transmission line",
                    b'Z' => "a MESFET",
                    _ => "no element SPICE knows",
                };
                self.err(
                    name_loc,
                    format!("`{name}` is {what} (element letter `{}`), which armature cannot check", letter as char),
                    "this element",
                    Some(format!("map it under `instances:` (as a part of a kind, with its pins), or remove it from the netlist: `{name}: {{kind: connector, pins: [a, b]}}`")),
                );
                return;
            }
        }
        fl.push(el, self);
    }

    /// The DC value of a V or I source: `DC x`, a plain value, or the
    /// first value of `PULSE(…)`, `PWL(…)`, `SIN(…)`…
    fn source_value(&mut self, card: &Card, scope: &Scope) -> Option<(number::Number, Loc)> {
        let mut it = card.items.iter().skip(3).peekable();
        while let Some(i) = it.next() {
            match &i.kind {
                ItemKind::Word(w) if w.eq_ignore_ascii_case("dc") => {
                    if let Some(v) = it.next() {
                        return self
                            .number_of(card, v, scope)
                            .map(|x| (x, card.loc(v.span)));
                    }
                }
                ItemKind::Word(w) if w.eq_ignore_ascii_case("ac") => {
                    it.next();
                }
                ItemKind::Word(w) if number::parse(w).is_some() => {
                    return self
                        .number_of(card, i, scope)
                        .map(|x| (x, card.loc(i.span)));
                }
                ItemKind::Braced(_) => {
                    return self
                        .number_of(card, i, scope)
                        .map(|x| (x, card.loc(i.span)));
                }
                ItemKind::Group(_, items) => {
                    if let Some(v) = items.first() {
                        return self
                            .number_of(card, v, scope)
                            .map(|x| (x, card.loc(v.span)));
                    }
                }
                _ => {}
            }
        }
        Some((
            number::Number {
                value: 0.0,
                upper_m: false,
            },
            card.loc(card.span),
        ))
    }

    #[allow(clippy::too_many_arguments)]
    fn instance(
        &mut self,
        fl: &mut Flatten,
        card: &Card,
        mut el: Element,
        words: &[&Item],
        prefix: &str,
        ports: &HashMap<String, String>,
        scope: &Scope,
    ) {
        let name = el.name.clone();
        let words: Vec<&Item> = words
            .iter()
            .copied()
            .filter(|w| !w.word().is_some_and(|t| t.eq_ignore_ascii_case("params:")))
            .collect();
        let Some((sub_item, nodes)) = words.split_last() else {
            self.err(
                el.name_loc,
                format!("`{name}` names no subcircuit"),
                "this instance",
                None,
            );
            return;
        };
        let sub = sub_item.word().unwrap_or("").to_string();
        let sub_loc = card.loc(sub_item.span);
        el.model = Some((sub.clone(), sub_loc));
        // a subcircuit the mapping names as a library part: one part
        if self.map.model(&sub).is_some() {
            el.nodes = nodes
                .iter()
                .map(|it| {
                    (
                        fl.net(it.word().unwrap_or(""), prefix, ports),
                        card.loc(it.span),
                    )
                })
                .collect();
            fl.push(el, self);
            return;
        }
        let Some(def) = fl.subckts.get(&sub.to_ascii_lowercase()) else {
            let mut names: Vec<&str> = fl.subckts.values().map(|s| s.name.as_str()).collect();
            names.extend(self.map.known_parts.iter().map(String::as_str));
            let hint = crate::suggest::did_you_mean(&sub, names.iter().copied());
            self.err(
                sub_loc,
                format!("`{name}` is an instance of `{sub}`, which is neither defined (`.subckt`) nor mapped to a library part"),
                "unknown subcircuit",
                Some(if hint.is_empty() {
                    format!("define `.subckt {sub}`, `.include` the file that does, or map it: `models: {{{sub}: PART}}`")
                } else {
                    hint
                }),
            );
            return;
        };
        if fl.stack.iter().any(|s| s.eq_ignore_ascii_case(&def.name)) {
            let mut chain: Vec<&str> = fl.stack.iter().map(String::as_str).collect();
            chain.push(&def.name);
            self.err(
                sub_loc,
                format!(
                    "subcircuit `{}` contains itself ({})",
                    def.name,
                    chain.join(" → ")
                ),
                "recursive instance",
                Some(
                    "a subcircuit cannot hold an instance of itself, directly or through others"
                        .into(),
                ),
            );
            return;
        }
        if fl.stack.len() >= MAX_SUBCKT_DEPTH {
            self.err(
                sub_loc,
                format!("subcircuit instances nest deeper than {MAX_SUBCKT_DEPTH} levels"),
                "too deep",
                None,
            );
            return;
        }
        if nodes.len() != def.ports.len() {
            let def_file = self.file(def.loc.file);
            let (l, _) = def_file.line_col(def.loc.span.start());
            let msg = format!(
                "`{name}` connects {} nodes, but `{}` has {} ports ({})",
                nodes.len(),
                def.name,
                def.ports.len(),
                def.ports.join(" ")
            );
            let f = Finding::input(ERROR, &self.file(card.file), el.name_loc.span, msg)
                .label("this instance")
                .related_in(
                    &def_file,
                    def.loc.span,
                    format!("`{}` is defined here (line {l})", def.name),
                );
            self.errors.push(f);
            return;
        }
        // ports, then parameters: defaults, overridden by the instance's
        let mut inner_ports = HashMap::default();
        for (p, it) in def.ports.iter().zip(nodes.iter()) {
            inner_ports.insert(
                p.to_ascii_lowercase(),
                fl.net(it.word().unwrap_or(""), prefix, ports),
            );
        }
        let mut inner = scope.clone();
        for (k, v) in &def.defaults {
            match value_of(v, &inner) {
                Ok(x) => {
                    inner.insert(k.clone(), x);
                }
                Err(why) => {
                    let loc = Loc {
                        file: def.loc.file,
                        span: v.span,
                    };
                    self.err(
                        loc,
                        format!("the default of `{k}` does not evaluate: {why}"),
                        "this value",
                        None,
                    );
                    return;
                }
            }
        }
        for it in card.items.iter() {
            if let ItemKind::Assign(k, v) = &it.kind {
                match self.eval_item(card, v, scope) {
                    Some(x) => {
                        inner.insert(k.to_ascii_lowercase(), x);
                    }
                    None => return,
                }
            }
        }
        let mut via = el.via.clone();
        via.push((name.clone(), el.line));
        let inner_prefix = format!("{name}.");
        fl.stack.push(def.name.clone());
        let allows = el.allow.len();
        fl.allow.extend(el.allow);
        // local `.param` lines first, in order
        for c in &def.body {
            if c.head().eq_ignore_ascii_case(".param") {
                self.params(c, &mut inner);
            }
        }
        let body: &Vec<Card> = &def.body;
        for c in body {
            if fl.over {
                break;
            }
            let h = c.head();
            if h.starts_with('.') {
                continue;
            }
            self.element(fl, c, &inner_prefix, &inner_ports, &inner, &via);
        }
        fl.allow.truncate(fl.allow.len().saturating_sub(allows));
        fl.stack.pop();
    }
}

/// A default parameter's value: a number, a parameter or an expression.
fn value_of(it: &Item, scope: &Scope) -> Result<f64, String> {
    match &it.kind {
        ItemKind::Word(w) => number::parse(w)
            .map(|n| n.value)
            .or_else(|| scope.get(&w.to_ascii_lowercase()).copied())
            .ok_or_else(|| format!("`{w}` is not a number")),
        ItemKind::Braced(e) => number::eval(e, scope),
        _ => Err("a value was expected".into()),
    }
}

struct Flatten<'d> {
    subckts: &'d HashMap<String, Subckt>,
    models: &'d HashMap<String, Model>,
    globals: &'d HashSet<String>,
    /// lower-case flattened net → spelling at first use
    nets: HashMap<String, String>,
    out: Vec<Element>,
    /// subcircuit names being expanded
    stack: Vec<String>,
    /// suppressions on the instance lines being expanded: they hold for
    /// every part inside
    allow: Vec<Allow>,
    over: bool,
}

impl Flatten<'_> {
    fn net(&mut self, w: &str, prefix: &str, ports: &HashMap<String, String>) -> String {
        let lower = w.to_ascii_lowercase();
        if let Some(p) = ports.get(&lower) {
            return p.clone();
        }
        let full = if self.globals.contains(&lower) || prefix.is_empty() {
            w.to_string()
        } else {
            format!("{prefix}{w}")
        };
        self.nets
            .entry(full.to_ascii_lowercase())
            .or_insert(full)
            .clone()
    }

    fn push(&mut self, mut el: Element, r: &mut Reader) {
        el.allow.extend(self.allow.iter().cloned());
        if self.out.len() >= r.max_elements {
            let f = r.file(el.line.file);
            r.errors.push(
                Finding::input(
                    "limit-exceeded",
                    &f,
                    el.name_loc.span,
                    format!(
                        "the netlist flattens to more than {} elements",
                        r.max_elements
                    ),
                )
                .label("the first element beyond the limit")
                .help("split the design into several netlists"),
            );
            self.over = true;
            return;
        }
        self.out.push(el);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn flat(items: &[Item]) -> Vec<(String, Span)> {
        items
            .iter()
            .map(|i| match &i.kind {
                ItemKind::Word(w) => (w.clone(), i.span),
                other => (format!("{other:?}"), i.span),
            })
            .collect()
    }

    /// The split of plain lines is the grammar's reading of them.
    #[test]
    fn plain_lines_split_as_the_grammar_reads_them() {
        let lines = [
            "R1 a b 10k",
            "  M1  d g s b NCH60  ",
            "V1 vb 0 DC 12",
            "Q1,c,b,e,NPN",
            "X1 a b\tc SUB",
            "D1 a k D$1 model",
            "R+ a-b c/d 1.5e-3",
            "ÉR1 a 0 1k",
            "",
            "   ",
        ];
        let mut n = 0;
        for l in lines {
            let fast = plain_words(l, 100);
            let Some(fast) = fast else {
                panic!("`{l}` is plain")
            };
            let slow: Vec<Item> = match SpiceParser::parse(Rule::line, l) {
                Ok(mut p) => p
                    .next()
                    .map(|x| x.into_inner().filter_map(|q| item_of(q, 100)).collect())
                    .unwrap_or_default(),
                Err(e) => panic!("`{l}`: {e}"),
            };
            assert_eq!(flat(&fast), flat(&slow), "`{l}`");
            n += fast.len();
        }
        assert!(n > 30);
        for l in [
            "R1 a b r=1k",
            "V1 a 0 PULSE(0 5)",
            "R1 a b {x}",
            ".include \"a b\"",
            "R1 a b 'x'",
        ] {
            assert!(plain_words(l, 0).is_none(), "`{l}` is not plain");
        }
    }
}
