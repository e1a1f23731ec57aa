//! Solutions kept across analyses (the language server's memory) give
//! exactly the facts a fresh analysis gives, on every sample and after an
//! edit that changes one group.

use armature::model::library::LibraryCache;
use armature::source::SourceFile;
use armature::{Options, analysis, build};

fn facts(name: &str, text: &str) -> serde_json::Value {
    let f = SourceFile::new(name, name, text.to_string());
    match build(&f, &Options::default(), &LibraryCache::default()) {
        Ok(b) => analysis::present::facts_json(&b),
        Err(e) => panic!(
            "{name}: {:?}",
            e.iter().map(|x| &x.message).collect::<Vec<_>>()
        ),
    }
}

#[test]
fn remembered_solutions_give_the_same_facts() {
    let mut boards: Vec<(String, String)> = Vec::new();
    for s in [
        "vent_fan",
        "irrigation_valve",
        "window_actuator",
        "conveyor_driver",
        "alarm_relay_faulty",
    ] {
        let name = format!("samples/{s}.drive");
        let text = std::fs::read_to_string(&name).unwrap_or_default();
        boards.push((name, text));
    }
    // an edit: the fan's gate resistor and its pull-down change
    let (name, text) = boards[0].clone();
    boards.push((
        name,
        text.replace("FAN_G) 100 p_max", "FAN_G) 470 p_max")
            .replace("100k", "22k"),
    ));
    assert_ne!(boards[0].1, boards[5].1);
    analysis::remember_solutions(false);
    let fresh: Vec<serde_json::Value> = boards.iter().map(|(n, t)| facts(n, t)).collect();
    analysis::remember_solutions(true);
    // twice over: the second pass reads every solution from memory
    for pass in 0..2 {
        for ((n, t), want) in boards.iter().zip(&fresh) {
            assert_eq!(&facts(n, t), want, "{n}, pass {pass}");
        }
    }
    analysis::remember_solutions(false);
}
