//! Progress of a check by stage, for whoever wants to show it (the CLI
//! draws a bar on a terminal). The library only announces stages; with no
//! sink set, an announcement costs one atomic load.

use std::sync::OnceLock;

/// A stage a file enters.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stage {
    /// Parsing and elaborating the netlist, with its libraries.
    Read,
    /// Solving its circuit groups: operating points and switching edges.
    Analyse,
    /// Running the rules and suppressions.
    Check,
    /// The file is done.
    Done,
}

type Sink = Box<dyn Fn(&str, Stage) + Send + Sync>;

static SINK: OnceLock<Sink> = OnceLock::new();

/// Set where stages are announced (once per process; false if one was
/// already set).
pub fn set_sink(f: Sink) -> bool {
    SINK.set(f).is_ok()
}

/// Announce that `file` enters stage `s`.
pub fn announce(file: &str, s: Stage) {
    if let Some(f) = SINK.get() {
        f(file, s);
    }
}
