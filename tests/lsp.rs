//! `armature lsp` driven as an editor drives it: JSON-RPC over the
//! process's stdio.

use serde_json::{Value, json};
use std::io::{BufRead, BufReader, Read, Write};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::mpsc::{Receiver, channel};
use std::time::Duration;

struct Client {
    child: Child,
    stdin: ChildStdin,
    rx: Receiver<Value>,
    next: u64,
}

impl Client {
    fn start() -> Client {
        let mut child = match Command::new(env!("CARGO_BIN_EXE_armature"))
            .arg("lsp")
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
        {
            Ok(c) => c,
            Err(e) => panic!("{e}"),
        };
        let (Some(stdin), Some(stdout)) = (child.stdin.take(), child.stdout.take()) else {
            panic!("no pipes")
        };
        let (tx, rx) = channel();
        std::thread::spawn(move || {
            let mut r = BufReader::new(stdout);
            loop {
                let mut len = 0usize;
                loop {
                    let mut line = String::new();
                    if r.read_line(&mut line).unwrap_or(0) == 0 {
                        return;
                    }
                    let l = line.trim();
                    if l.is_empty() {
                        break;
                    }
                    if let Some(v) = l.strip_prefix("Content-Length:") {
                        len = v.trim().parse().unwrap_or(0);
                    }
                }
                let mut body = vec![0; len];
                if r.read_exact(&mut body).is_err() {
                    return;
                }
                if let Ok(v) = serde_json::from_slice::<Value>(&body)
                    && tx.send(v).is_err()
                {
                    return;
                }
            }
        });
        Client {
            child,
            stdin,
            rx,
            next: 1,
        }
    }

    fn raw(&mut self, body: &str) {
        let _ = write!(self.stdin, "Content-Length: {}\r\n\r\n{body}", body.len());
        let _ = self.stdin.flush();
    }

    fn notify(&mut self, method: &str, params: Value) {
        self.raw(&json!({"jsonrpc": "2.0", "method": method, "params": params}).to_string());
    }

    fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.next;
        self.next += 1;
        self.raw(
            &json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}).to_string(),
        );
        self.wait(|m| m["id"] == id)
    }

    fn wait(&mut self, want: impl Fn(&Value) -> bool) -> Value {
        loop {
            match self.rx.recv_timeout(Duration::from_secs(30)) {
                Ok(m) if want(&m) => return m,
                Ok(_) => {}
                Err(e) => panic!("no answer: {e}"),
            }
        }
    }

    fn diagnostics(&mut self, uri: &str) -> Vec<Value> {
        let m = self.wait(|m| {
            m["method"] == "textDocument/publishDiagnostics" && m["params"]["uri"] == uri
        });
        m["params"]["diagnostics"]
            .as_array()
            .cloned()
            .unwrap_or_default()
    }
}

fn codes(d: &[Value]) -> Vec<String> {
    let mut v: Vec<String> = d
        .iter()
        .map(|x| x["code"].as_str().unwrap_or("").to_string())
        .collect();
    v.sort();
    v
}

#[test]
fn an_editor_session() {
    let mut c = Client::start();
    let init = c.request(
        "initialize",
        json!({"processId": null, "rootUri": null, "capabilities": {}}),
    );
    assert_eq!(
        init["result"]["capabilities"]["hoverProvider"], true,
        "{init}"
    );
    c.notify("initialized", json!({}));

    let path = std::fs::canonicalize("samples/alarm_relay_faulty.drive").unwrap_or_default();
    let uri = format!("file://{}", path.display());
    let text = std::fs::read_to_string(&path).unwrap_or_default();
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": uri, "languageId": "drive", "version": 1, "text": text}}),
    );
    let d = c.diagnostics(&uri);
    let cs = codes(&d);
    assert!(cs.contains(&"freewheel-missing".to_string()), "{cs:?}");
    // ranges in 0-based lines and UTF-16 columns: `samples/alarm_relay_faulty.drive:14:22`
    let base = d.iter().find(|x| x["code"] == "base-unlimited");
    let Some(base) = base else { panic!("{cs:?}") };
    assert_eq!(base["range"]["start"], json!({"line": 13, "character": 21}));
    assert_eq!(base["severity"], 1);
    assert_eq!(base["source"], "armature");
    let fw = d
        .iter()
        .find(|x| x["code"] == "freewheel-missing")
        .cloned()
        .unwrap_or_default();
    assert_eq!(fw["range"]["start"]["line"], 14);
    assert!(
        !fw["relatedInformation"]
            .as_array()
            .is_none_or(Vec::is_empty),
        "{fw}"
    );

    // fix it: a freewheel diode across the relay coil
    let fixed = text.replace(
        "relay K1 (+: VBAT, -: RLY_SW) part=DEMO-RLY-12V\n",
        "relay K1 (+: VBAT, -: RLY_SW) part=DEMO-RLY-12V\ndiode D5 (a: RLY_SW, k: VBAT) part=DEMO-SK40-1A\n",
    );
    assert_ne!(fixed, text);
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 2}, "contentChanges": [{"text": fixed}]}),
    );
    let d2 = c.diagnostics(&uri);
    let cs2 = codes(&d2);
    assert!(!cs2.contains(&"freewheel-missing".to_string()), "{cs2:?}");
    assert!(cs2.len() < cs.len());

    // hover a part: its kind, its library part and computed facts
    let line = fixed
        .lines()
        .position(|l| l.starts_with("nmos  Q6"))
        .unwrap_or(0);
    let h = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": 7}}),
    );
    let md = h["result"]["contents"]["value"].as_str().unwrap_or("");
    assert!(
        md.contains("**Q6** — nmos") && md.contains("DEMO-N60-STD"),
        "{md}"
    );
    assert!(md.contains("vds_max = 60 V"), "{md}");
    assert!(md.contains("Computed:"), "{md}");

    // go to the definition of a net, and its references
    let def = c.request(
        "textDocument/definition",
        json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": 14}}),
    );
    assert_eq!(def["result"]["uri"], uri.as_str(), "{def}");
    let refs = c.request(
        "textDocument/references",
        json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": 14}, "context": {"includeDeclaration": true}}),
    );
    assert!(refs["result"].as_array().map_or(0, Vec::len) >= 2, "{refs}");

    // complete a pin name of the kind being typed
    let typing = format!("{fixed}nmos Q9 (");
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 3}, "contentChanges": [{"text": typing}]}),
    );
    let _ = c.diagnostics(&uri);
    let last = typing.lines().count() - 1;
    let comp = c.request(
        "textDocument/completion",
        json!({"textDocument": {"uri": uri}, "position": {"line": last, "character": 9}}),
    );
    let labels: Vec<&str> = comp["result"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|i| i["label"].as_str())
        .collect();
    assert_eq!(labels, ["d", "g", "s"], "{comp}");
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 4}, "contentChanges": [{"text": fixed}]}),
    );
    let _ = c.diagnostics(&uri);

    // a code action: the suppression, with a place for the reason
    let act = c.request(
        "textDocument/codeAction",
        json!({"textDocument": {"uri": uri}, "range": fw["range"], "context": {"diagnostics": [fw]}}),
    );
    let edit = &act["result"][0]["edit"]["changes"][uri.as_str()][0];
    assert_eq!(
        edit["range"]["start"],
        json!({"line": 14, "character": 0}),
        "{act}"
    );
    assert_eq!(
        edit["newText"],
        "# armature: allow freewheel-missing -- <why the finding does not apply>\n"
    );

    // the rule's explain page, linked from the diagnostic
    let href = fw["codeDescription"]["href"].as_str().unwrap_or("");
    let page = std::fs::read_to_string(href.trim_start_matches("file://")).unwrap_or_default();
    assert!(page.starts_with("freewheel-missing"), "{href}: {page}");

    // a mechanical fix: the pull-down a floating gate needs
    let gf = d2
        .iter()
        .find(|x| x["code"] == "gate-floating" && x["data"]["parts"][0] == "Q6")
        .cloned()
        .unwrap_or_default();
    let act = c.request(
        "textDocument/codeAction",
        json!({"textDocument": {"uri": uri}, "range": gf["range"], "context": {"diagnostics": [gf]}}),
    );
    let fix = &act["result"][0];
    assert!(
        fix["title"].as_str().unwrap_or("").contains("pull-down"),
        "{act}"
    );
    let e = &fix["edit"]["changes"][uri.as_str()][0];
    let at = e["range"]["start"]["line"].as_u64().unwrap_or(0) as usize;
    let mut lines: Vec<String> = fixed.lines().map(str::to_string).collect();
    lines.insert(
        at,
        e["newText"].as_str().unwrap_or("").trim_end().to_string(),
    );
    let pulled = lines.join("\n") + "\n";
    assert!(
        pulled.contains("resistor RQ6_OFF (HEAT_G, GND) 47k"),
        "{pulled}"
    );
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": uri, "version": 5}, "contentChanges": [{"text": pulled}]}),
    );
    let d3 = c.diagnostics(&uri);
    assert!(
        !d3.iter()
            .any(|x| x["code"] == "gate-floating" && x["data"]["parts"][0] == "Q6"),
        "{:?}",
        codes(&d3)
    );

    // another: a freewheel diode fitted backwards, turned round
    let rpath = std::fs::canonicalize("tests/fixtures/rules/freewheel-reversed/bad.drive")
        .unwrap_or_default();
    let ruri = format!("file://{}", rpath.display());
    let rtext = std::fs::read_to_string(&rpath).unwrap_or_default();
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": ruri, "languageId": "drive", "version": 1, "text": rtext}}),
    );
    let rd = c.diagnostics(&ruri);
    let rev = rd
        .iter()
        .find(|x| x["code"] == "freewheel-reversed")
        .cloned()
        .unwrap_or_default();
    let act = c.request(
        "textDocument/codeAction",
        json!({"textDocument": {"uri": ruri}, "range": rev["range"], "context": {"diagnostics": [rev]}}),
    );
    let edits = act["result"][0]["edit"]["changes"][ruri.as_str()]
        .as_array()
        .cloned()
        .unwrap_or_default();
    assert_eq!(edits.len(), 2, "{act}");
    let mut turned = rtext.clone();
    for (from, e) in [("a: VBAT", &edits[0]), ("k: SW", &edits[1])] {
        turned = turned.replacen(
            from,
            &format!("@{}", e["newText"].as_str().unwrap_or("")),
            1,
        );
    }
    let turned = turned.replace('@', "");
    assert!(turned.contains("diode D1 (a: SW, k: VBAT)"), "{turned}");
    c.notify(
        "textDocument/didChange",
        json!({"textDocument": {"uri": ruri, "version": 2}, "contentChanges": [{"text": turned}]}),
    );
    let rd2 = c.diagnostics(&ruri);
    assert!(codes(&rd2).is_empty(), "{:?}", codes(&rd2));

    // a parts library opened in the editor: its own errors, located
    let lib_path = std::fs::canonicalize("samples/parts/greenhouse.yaml").unwrap_or_default();
    let lib_uri = format!("file://{}", lib_path.display());
    let lib = std::fs::read_to_string(&lib_path).unwrap_or_default();
    let broken = lib.replacen("    vds_max: 60V\n", "    vds_maxx: 60V\n", 1);
    assert_ne!(broken, lib);
    let bad_line = broken
        .lines()
        .position(|l| l.contains("vds_maxx"))
        .unwrap_or(0);
    c.notify(
        "textDocument/didOpen",
        json!({"textDocument": {"uri": lib_uri, "languageId": "yaml", "version": 1, "text": broken}}),
    );
    let ld = c.diagnostics(&lib_uri);
    assert!(
        ld.iter()
            .any(|x| x["code"] == "library-error" && x["range"]["start"]["line"] == bad_line),
        "{ld:?}"
    );
    // the open netlists are checked again (the library on disk is as it was)
    let again = c.diagnostics(&uri);
    assert!(!again.is_empty());

    // a burst of edits: the last text is what the last diagnostics describe
    for (v, t) in [(10, format!("{fixed}nmos Q9 (")), (11, fixed.clone())] {
        c.notify(
            "textDocument/didChange",
            json!({"textDocument": {"uri": uri, "version": v}, "contentChanges": [{"text": t}]}),
        );
    }
    let mut last = c.diagnostics(&uri);
    while codes(&last).contains(&"parse-error".to_string()) {
        last = c.diagnostics(&uri);
    }
    assert_eq!(codes(&last), cs2);

    // malformed input and unknown methods: protocol errors, and the
    // session goes on
    c.raw("{not json");
    let e = c.wait(|m| m["error"]["code"] == -32700);
    assert_eq!(e["id"], Value::Null);
    let u = c.request("workspace/frobnicate", json!({}));
    assert_eq!(u["error"]["code"], -32601, "{u}");
    c.raw(&json!({"jsonrpc": "2.0", "id": 99}).to_string());
    let _ = c.wait(|m| m["id"] == 99 && m["error"]["code"] == -32600);
    let h2 = c.request(
        "textDocument/hover",
        json!({"textDocument": {"uri": uri}, "position": {"line": line + 1, "character": 7}}),
    );
    assert!(h2["result"]["contents"]["value"].is_string());

    let s = c.request("shutdown", Value::Null);
    assert_eq!(s["result"], Value::Null);
    c.notify("exit", Value::Null);
    let status = c.child.wait();
    assert!(status.is_ok_and(|s| s.success()));
}
