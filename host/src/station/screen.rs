//! What the technician sees of a board: the verdict large, with the likely faults in the words
//! of `biasjig check`.

use biasjig_core::explain::{listing, suspect_of, Listed};
use biasjig_core::kv;
use biasjig_core::stage::Stage;

use crate::link::Reply;

/// The verdict, large, with the likely faults in the words of `biasjig check` (the core's
/// listing, from the reply's machine `fault=` lines and the stage the station pushed).
pub fn banner(stage: &Stage, reply: &Reply) -> String {
    let verdict = reply.value("verdict").unwrap_or("?").to_uppercase();
    let mut s = big(&verdict);
    let items = listed_faults(reply);
    if !items.is_empty() {
        let explained = reply.value("explained") != Some("0");
        listing(stage, explained, &items, &mut |a| {
            s.push_str(&format!("{a}\n"));
        });
    }
    s
}

pub(crate) fn big(word: &str) -> String {
    let spaced: String = word.chars().flat_map(|c| [c, ' ']).collect();
    let bar = "#".repeat(spaced.len() + 8);
    format!("{bar}\n##  {}  ##\n{bar}\n", spaced.trim_end())
}

/// The faults of a machine reply (`fault=PART mode=MODE score= estimate= equivalent=P:M,...`).
pub fn listed_faults(reply: &Reply) -> Vec<Listed> {
    let mut v = Vec::new();
    for l in reply.data.iter().filter(|l| l.starts_with("fault=")) {
        let get = |k: &str| kv::value(l, k);
        let Some(suspect) = get("fault")
            .zip(get("mode"))
            .and_then(|(p, m)| suspect_of(p, m))
        else {
            continue;
        };
        let mut same = heapless::Vec::new();
        for (p, m) in get("equivalent")
            .unwrap_or("none")
            .split(',')
            .filter_map(|pm| pm.split_once(':'))
        {
            if let Some(e) = suspect_of(p, m) {
                let _ = same.push(e);
            }
        }
        v.push(Listed {
            suspect,
            estimate: get("estimate").and_then(|e| e.parse().ok()),
            score: get("score").and_then(|e| e.parse().ok()).unwrap_or(0.0),
            same,
            tone: None,
        });
    }
    v
}
