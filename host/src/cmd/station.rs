//! `biasjig station`: the technician's loop. Push the design and every test setting (test
//! ambient, meter, measuring inputs) to the instrument and verify the one settings digest, then
//! per board: read the serial number (one already in the log is said and recorded as a retest),
//! trigger measure and check, show the verdict large with the likely faults in the words of
//! `biasjig check`, append one complete JSON line to the log.
//!
//! An instrument reset, a timeout, garbage on the line or another settings digest makes the
//! station synchronise again, push again and repeat the board; a record is written only from
//! one complete reply with the right digest before and after it, once, so nothing is lost or
//! doubled. `--manual` runs the same loop against the console engine in this process, with the
//! readings typed from a meter: a line that is not readings is asked again, readings the engine
//! refuses are logged as refused with the reason.
//!
//! The log is the board log of `biasjig check --log` ([`crate::boardlog`]: append-only JSON
//! Lines, torn tails skipped), and each record has the shape of `biasjig check --json` plus
//! `time`, `serial`, `design` (`id`, `hash`, `digest`), `readings`, `settings`, `digest`,
//! `overrides` and `retest` (and `typed` for refused typed readings); with `--store` the same
//! records go to the results store with station, operator and lot ([`crate::board::StationSink`]).

use std::collections::HashMap;
use std::io::{BufRead, Write};
use std::path::{Path, PathBuf};
use std::time::Duration;

use biasjig_core::console::record::design_hash;
use biasjig_core::device::Profile;
use biasjig_core::explain::{listing, suspect_of, Listed};
use biasjig_core::settings::{digest, InputMode, Inputs, TestSettings, DEFAULT_TEMP_C};
use biasjig_core::stage::{Polarity, Resistor, Stage};
use serde_json::{json, Map, Value};

use crate::board::StationSink;
use crate::boardlog;
use crate::cmd::console::{link_error, local_console, sync_budget};
use crate::designfile;
use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::link::{Link, LinkError, MemoryPort, Port, Reply, SerialLink};
use crate::stage_args::{settings_error, InputArgs, TestArgs};
use crate::store::TraceArgs;
use crate::values;
use crate::Global;

/// Tries per board before the station gives up.
const TRIES: usize = 3;

/// `biasjig station --port PATH --design FILE --log FILE [--manual]`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Serial port of the instrument
    #[arg(long, value_name = "PATH", required_unless_present = "manual")]
    pub port: Option<String>,
    /// Baud rate of the serial port
    #[arg(long, default_value_t = 115_200)]
    pub baud: u32,
    /// Design file written by `biasjig design -o FILE`
    #[arg(long, value_name = "FILE")]
    pub design: PathBuf,
    /// Board log: one JSON line per board is appended
    #[arg(long, value_name = "FILE")]
    pub log: PathBuf,
    /// No instrument: readings are typed from a meter (VCC VB VE VC)
    #[arg(long, conflicts_with = "port")]
    pub manual: bool,
    /// Seconds allowed to synchronise with the instrument
    #[arg(long = "sync-timeout", default_value_t = crate::link::SYNC_TIMEOUT.as_secs_f64(), value_name = "S")]
    pub sync_timeout: f64,
    /// Test ambient, °C (the station's, not the design's operating range) [default: the design
    /// file's test ambient, or 25]
    #[arg(long, value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Test ambient")]
    pub temp: Option<f64>,
    #[command(flatten)]
    pub test: TestArgs,
    #[command(flatten)]
    pub inputs: InputArgs,
    /// Also keep the pushed design on the instrument under NAME (its `keep NAME`), so that the
    /// unit starts on it and can choose it again with no PC
    #[arg(long, value_name = "NAME")]
    pub keep: Option<String>,
    #[command(flatten)]
    pub trace: TraceArgs,
}

impl Cmd {
    /// The test settings the station pushes: the design file's (or the core's defaults), changed
    /// by the flags, and the flags that changed them (`overrides` of each record).
    pub fn test_settings(&self, base: TestSettings) -> Result<(TestSettings, Value), CliError> {
        let mut ts = base;
        let mut over = Map::new();
        let mut add = |flag: &str, v: Option<f64>| {
            if let Some(v) = v {
                over.insert(flag.to_owned(), json!(v));
            }
        };
        if let Some(t) = self.temp {
            ts.temp_min_c = t;
            ts.temp_max_c = t;
        }
        add("--temp", self.temp);
        let t = &self.test;
        ts.temp_min_c = t.temp_min.unwrap_or(ts.temp_min_c);
        ts.temp_max_c = t.temp_max.unwrap_or(ts.temp_max_c);
        ts.meter.gain_error = t.meter.meter.unwrap_or(ts.meter.gain_error);
        ts.meter.offset = t.meter.meter_offset.unwrap_or(ts.meter.offset);
        ts.meter.divider_tol = t.meter.divider_tol.unwrap_or(ts.meter.divider_tol);
        ts.inputs.r = self.inputs.input_r.or(ts.inputs.r);
        ts.inputs.mode = self.inputs.inputs.unwrap_or(ts.inputs.mode);
        add("--temp-min", t.temp_min);
        add("--temp-max", t.temp_max);
        add("--meter", t.meter.meter.map(|g| 100.0 * g));
        add("--meter-offset", t.meter.meter_offset);
        add("--divider-tol", t.meter.divider_tol.map(|d| 100.0 * d));
        add("--input-r", self.inputs.input_r);
        add(
            "--inputs",
            self.inputs.inputs.map(|m| match m {
                InputMode::Together => 0.0,
                InputMode::One => 1.0,
            }),
        );
        ts.validate().map_err(|e| settings_error(&ts, e))?;
        Ok((ts, Value::Object(over)))
    }
}

/// The lines that put everything a verdict depends on onto the instrument: the stage (parts,
/// tolerances, supply tolerance), the transistor, the test ambient, the meter and the measuring
/// inputs (exact values: shortest round-trip decimal forms).
pub fn push_lines(stage: &Stage, profile: &Profile, settings: &TestSettings) -> Vec<String> {
    let pct = |t: f64| format!("{:e}%", t * 100.0);
    let mut v = vec![
        format!(
            "set polarity {}",
            if stage.polarity == Polarity::Npn {
                "npn"
            } else {
                "pnp"
            }
        ),
        format!("set vcc {:e} {}", stage.vcc.value, pct(stage.vcc.tol)),
    ];
    for r in Resistor::ALL {
        let p = stage.part(r);
        v.push(format!(
            "set {} {:e} {}",
            r.name().to_lowercase(),
            p.value,
            pct(p.tol)
        ));
    }
    v.push(match stage.rl {
        Some(rl) => format!("set rl {rl:e}"),
        None => "set rl none".into(),
    });
    v.push(format!("set rs {:e}", stage.rs));
    for (name, c) in [("cin", stage.cin), ("cout", stage.cout), ("ce", stage.ce)] {
        v.push(match c {
            Some(p) => format!("set {name} {:e} {}", p.value, pct(p.tol)),
            None => format!("set {name} none"),
        });
    }
    // beta sets min, typ and max; then widen.
    v.push(format!("set beta {:e}", profile.beta_typ));
    v.push(format!("set beta-min {:e}", profile.beta_min));
    v.push(format!("set beta-max {:e}", profile.beta_max));
    v.push(format!("set beta-rev {:e}", profile.beta_rev));
    v.push(format!("set beta-tc {:e}%", profile.beta_tc * 100.0));
    v.push(format!("set is {:e}", profile.is_25));
    v.push(match profile.early {
        Some(e) => format!("set early {e:e}"),
        None => "set early none".into(),
    });
    v.push(format!("set vce-sat {:e}", profile.vce_sat));
    v.push(format!("set power-rating {:e}", profile.power_25));
    v.push(format!("set tj-max {:e}", profile.tj_max));
    // `set temp` collapses the range to one ambient inside it; then widen it.
    let (lo, hi) = (settings.temp_min_c, settings.temp_max_c);
    v.push(format!(
        "set temp {:e}",
        DEFAULT_TEMP_C.clamp(lo.min(hi), hi.max(lo))
    ));
    v.push(format!("set temp-min {lo:e}"));
    v.push(format!("set temp-max {hi:e}"));
    let m = &settings.meter;
    v.push(format!("meter gain {}", pct(m.gain_error)));
    v.push(format!("meter offset {:e}", m.offset));
    v.push(format!("meter divider {}", pct(m.divider_tol)));
    v.push(match settings.inputs.r {
        Some(r) => format!("set input-r {r:e}"),
        None => "set input-r none".into(),
    });
    v.push(format!("set inputs {}", settings.inputs.mode.name()));
    v
}

/// The settings digest the instrument must report after [`push_lines`] (the text forms are
/// parsed by the same engine), and the design hash of its stage and transistor.
pub fn expected(
    stage: &Stage,
    profile: &Profile,
    settings: &TestSettings,
) -> Option<(String, u64)> {
    let mut c = local_console();
    let mut sink = Vec::new();
    for l in push_lines(stage, profile, settings) {
        let mut out = embedded_io_adapters::std::FromStd::new(&mut sink);
        c.line(&l, &mut out).ok()?;
    }
    let text = String::from_utf8_lossy(&sink);
    if text.lines().any(|l| l.starts_with("err ")) {
        return None;
    }
    let st = c.settings();
    Some((
        digest(&st.stage, &st.profile, &st.test_settings()).to_string(),
        design_hash(&st.stage, &st.profile),
    ))
}

/// Why one board could not be done.
#[derive(Debug)]
pub enum BoardError {
    /// The link failed (the station resynchronises and tries again).
    Link(LinkError),
    /// The instrument refused (an `err` status): not worth repeating.
    Refused(String),
}

/// The technician's loop over any port.
pub struct Station<P: Port, F: FnMut() -> Result<P, LinkError>> {
    link: Link<P>,
    reopen: F,
    push: Vec<String>,
    /// The settings digest the instrument must report (64 hex digits).
    digest: String,
    /// The design hash (stage and transistor), for the log.
    hash: u64,
    /// What each record carries besides the board: `settings`, `overrides`, and the design
    /// file's digest ([`provenance`]).
    provenance: Value,
    design_id: String,
    /// The stage pushed (for the fault words on the screen).
    stage: Stage,
    budget: Duration,
    /// When no measuring inputs were stated: the transistor and the test settings, to take the
    /// instrument's own inputs into them ([`Station::inputs_from_unit`]).
    adopt: Option<Adopt>,
    /// The measuring inputs in the pushed settings.
    inputs_used: Inputs,
    /// Keep the design on the instrument under this name (`--keep`).
    keep: Option<String>,
    /// Resynchronisations done (resets, timeouts, garbage).
    pub resyncs: usize,
}

/// What the station needs to take the instrument's own measuring inputs.
#[derive(Debug, Clone, Copy)]
struct Adopt {
    profile: Profile,
    settings: TestSettings,
    /// `--inputs` was given: keep its mode.
    mode_stated: bool,
}

impl<P: Port, F: FnMut() -> Result<P, LinkError>> Station<P, F> {
    /// A station on the port `reopen` opens; `push` are the lines that put the design and the
    /// test settings on the instrument and `digest` the settings digest they give
    /// ([`expected`]), `hash` the design hash and `provenance` what every record carries besides
    /// the board ([`provenance`]).
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        mut reopen: F,
        push: Vec<String>,
        digest: String,
        hash: u64,
        provenance: Value,
        design_id: String,
        stage: Stage,
        budget: Duration,
    ) -> Result<Self, LinkError> {
        let port = reopen()?;
        Ok(Self {
            link: Link::new(port),
            reopen,
            push,
            digest,
            hash,
            provenance,
            design_id,
            stage,
            budget,
            adopt: None,
            inputs_used: Inputs::IDEAL,
            keep: None,
            resyncs: 0,
        })
    }

    /// Once the design is on the instrument, keep it there under `name` (its `keep NAME`).
    pub fn keep_as(mut self, name: Option<String>) -> Self {
        self.keep = name;
        self
    }

    /// No measuring inputs were stated (neither the design file nor `--input-r`): the inputs are
    /// the instrument's own (its jig's dividers, from its `meter` answer), and the pushed lines,
    /// the digest and the records follow them. `mode_stated`: `--inputs` was given.
    pub fn inputs_from_unit(
        mut self,
        profile: Profile,
        settings: TestSettings,
        mode_stated: bool,
    ) -> Self {
        self.adopt = Some(Adopt {
            profile,
            settings,
            mode_stated,
        });
        self
    }

    /// Take the instrument's own measuring inputs (see [`Station::inputs_from_unit`]).
    fn adopt_inputs(&mut self) -> Result<(), BoardError> {
        let Some(a) = self.adopt else {
            return Ok(());
        };
        let r = self.link.command("meter").map_err(BoardError::Link)?;
        if !r.ok() {
            return Ok(());
        }
        let mut ts = a.settings;
        ts.inputs.r = r.value("input_r").and_then(|v| v.parse::<f64>().ok());
        if ts.inputs.r.is_some() && !a.mode_stated {
            if let Some(m) = r.value("inputs").and_then(InputMode::parse) {
                ts.inputs.mode = m;
            }
        }
        let (digest, hash) = expected(&self.stage, &a.profile, &ts).ok_or_else(|| {
            BoardError::Refused(format!(
                "the instrument's own measuring inputs ({:?}) are not accepted",
                r.data
            ))
        })?;
        self.push = push_lines(&self.stage, &a.profile, &ts);
        self.digest = digest;
        self.hash = hash;
        if let Some(o) = self.provenance.as_object_mut() {
            o.insert("settings".into(), crate::cmd::check::settings_json(&ts));
        }
        self.inputs_used = ts.inputs;
        Ok(())
    }

    /// The measuring inputs the station judges with (after [`Station::prepare`]).
    pub fn inputs(&self) -> Inputs {
        self.inputs_used
    }

    /// The instrument reports the expected settings digest.
    fn digest_ok(&mut self) -> Result<bool, LinkError> {
        Ok(self.digest_reply()?.value("digest") == Some(self.digest.as_str()))
    }

    fn digest_reply(&mut self) -> Result<Reply, LinkError> {
        let r = self.link.command("digest")?;
        Ok(if r.ok() {
            r
        } else {
            Reply {
                data: Vec::new(),
                status: r.status,
            }
        })
    }

    /// Synchronise, switch to machine mode, and make sure the instrument holds the design and
    /// every test setting: when its settings digest differs, push them all, then verify the
    /// digest.
    pub fn prepare(&mut self) -> Result<String, BoardError> {
        let id = self.link.sync(self.budget).map_err(BoardError::Link)?;
        for l in ["echo off", "mode machine"] {
            let r = self.link.command(l).map_err(BoardError::Link)?;
            if !r.ok() {
                return Err(BoardError::Refused(format!("{l}: {}", r.status)));
            }
        }
        self.adopt_inputs()?;
        let first = self.digest_reply().map_err(BoardError::Link)?;
        if code_of(&first.status) == "UNKNOWN" {
            return Err(BoardError::Refused(format!(
                "the instrument has no digest command ({}): its firmware is older than the \
                 settings digest; update it",
                first.status
            )));
        }
        if first.value("digest") != Some(self.digest.as_str()) {
            for l in self.push.clone() {
                let r = self.link.command(&l).map_err(BoardError::Link)?;
                if !r.ok() {
                    return Err(BoardError::Refused(format!("{l}: {}", r.status)));
                }
            }
            if !self.digest_ok().map_err(BoardError::Link)? {
                return Err(BoardError::Refused(
                    "the settings did not take: the instrument's settings digest differs".into(),
                ));
            }
        }
        if let Some(name) = self.keep.clone() {
            let l = format!("keep {name}");
            let r = self.link.command(&l).map_err(BoardError::Link)?;
            if !r.ok() {
                return Err(BoardError::Refused(format!("{l}: {}", r.status)));
            }
        }
        Ok(id)
    }

    fn recover(&mut self) -> Result<(), BoardError> {
        self.resyncs += 1;
        if let Ok(p) = (self.reopen)() {
            self.link = Link::new(p);
        }
        self.prepare().map(|_| ())
    }

    /// One board: `action` is `test` (instrument) or `check VCC VB VE VC` (typed). The reply
    /// counts only when the settings digest is right before and after it.
    pub fn board(&mut self, action: &str) -> Result<Reply, BoardError> {
        let mut last = None;
        for _ in 0..TRIES {
            let attempt = (|| -> Result<Result<Reply, String>, LinkError> {
                if !self.digest_ok()? {
                    return Err(LinkError::Garbage(
                        "the instrument lost the settings".into(),
                    ));
                }
                let r = self.link.command(action)?;
                if !self.digest_ok()? {
                    return Err(LinkError::Garbage(
                        "the instrument lost the settings".into(),
                    ));
                }
                Ok(if r.ok() { Ok(r) } else { Err(r.status) })
            })();
            match attempt {
                Ok(Ok(r)) => return Ok(r),
                Ok(Err(status)) => return Err(BoardError::Refused(status)),
                Err(e) => {
                    last = Some(e);
                    if let Err(BoardError::Refused(m)) = self.recover() {
                        return Err(BoardError::Refused(m));
                    }
                }
            }
        }
        Err(BoardError::Link(
            last.unwrap_or(LinkError::Timeout("no reply".into())),
        ))
    }

    /// Time one reply may take.
    #[cfg(test)]
    pub fn set_reply_timeout(&mut self, t: Duration) {
        self.link.reply_timeout = t;
    }

    /// The design identifier for the log.
    pub fn design_id(&self) -> &str {
        &self.design_id
    }

    /// The settings digest verified on the instrument.
    pub fn digest(&self) -> &str {
        &self.digest
    }

    /// A record with what judged it: `settings`, `digest` (verified on the instrument),
    /// `overrides`, and `design.digest` (the design file's).
    pub fn stamp(&self, mut record: Value) -> Value {
        if let (Some(o), Some(p)) = (record.as_object_mut(), self.provenance.as_object()) {
            for (k, v) in p {
                match (
                    k.as_str(),
                    o.get_mut("design").and_then(Value::as_object_mut),
                ) {
                    ("design_digest", Some(d)) => {
                        d.insert("digest".into(), v.clone());
                    }
                    _ => {
                        o.insert(k.clone(), v.clone());
                    }
                }
            }
            o.insert("digest".into(), json!(self.digest));
        }
        record
    }
}

/// What every record carries besides the board, in the shape of `biasjig check --log`:
/// `settings` (test ambient, meter, inputs), `overrides` (the flags that changed the design
/// file's settings) and the design file's digest.
pub fn provenance(settings: &TestSettings, overrides: Value, design_digest: &str) -> Value {
    json!({
        "settings": crate::cmd::check::settings_json(settings),
        "overrides": overrides,
        "design_digest": design_digest,
    })
}

fn num(s: Option<&str>) -> Value {
    s.and_then(|t| t.parse::<f64>().ok())
        .map_or(Value::Null, Value::from)
}

/// The log record of one board from the machine reply of `test`/`check`: the shape of
/// `biasjig check --json` (`verdict`, `nodes`, `derived`, `faults`, `explained` when diagnosed)
/// plus `time` (ISO 8601 UTC), `serial`, `design` (`id`, `hash`) and `readings`.
pub fn record(
    serial: &str,
    design: &str,
    hash: u64,
    reply: &Reply,
    time: &str,
    retest: bool,
) -> Value {
    let mut nodes = Map::new();
    let mut faults = Vec::new();
    let mut derived = Map::new();
    let mut readings = Map::new();
    let mut explained = None;
    let mut ac = Vec::new();
    for l in &reply.data {
        let kv: Map<String, Value> = l
            .split(' ')
            .filter_map(|p| p.split_once('='))
            .map(|(k, v)| (k.to_owned(), Value::String(v.to_owned())))
            .collect();
        let get = |k: &str| kv.get(k).and_then(Value::as_str);
        if let Some(node) = get("node") {
            nodes.insert(
                node.to_owned(),
                json!({"measured": num(get("measured")), "low": num(get("low")),
                       "high": num(get("high")), "ok": get("ok") == Some("1")}),
            );
        } else if let Some(part) = get("fault") {
            let equivalent: Vec<Value> = get("equivalent")
                .filter(|e| *e != "none")
                .map(|e| {
                    e.split(',')
                        .filter_map(|pm| pm.split_once(':'))
                        .map(|(p, m)| json!({"part": p, "mode": m}))
                        .collect()
                })
                .unwrap_or_default();
            faults.push(
                json!({"part": part, "mode": get("mode"), "score": num(get("score")),
                       "estimate": num(get("estimate")), "equivalent": equivalent}),
            );
        } else if l.starts_with("ac ") {
            // The signal test's gain readings and windows (as `check --json`'s "ac").
            ac.push(json!({"f": num(get("f")), "measured": num(get("measured")),
                       "low": num(get("low")), "high": num(get("high")),
                       "ok": get("ok") == Some("1")}));
        } else if l.starts_with("derived ") {
            for k in ["ic", "ib", "ie", "vbe", "vce", "beta"] {
                derived.insert(k.into(), num(get(k)));
            }
            derived.insert(
                "region".into(),
                get("region").map_or(Value::Null, Value::from),
            );
        } else if get("source").is_some() {
            for k in ["vcc", "vb", "ve", "vc"] {
                readings.insert(k.into(), num(get(k)));
            }
        } else if get("verdict").is_some() {
            explained = get("explained").map(|e| e == "1");
        }
    }
    let mut doc = json!({
        "verdict": reply.value("verdict"),
        "nodes": nodes,
        "derived": derived,
        "faults": faults,
        "time": time,
        "serial": serial,
        "design": {"id": design, "hash": format!("{hash:016x}")},
        "readings": readings,
        "retest": retest,
    });
    if let (Some(e), Some(obj)) = (explained, doc.as_object_mut()) {
        obj.insert("explained".into(), json!(e));
    }
    if let (false, Some(obj)) = (ac.is_empty(), doc.as_object_mut()) {
        obj.insert("ac".into(), Value::Array(ac));
    }
    doc
}

/// The log record of a board whose readings were refused before judgement (the shape of
/// `biasjig check --json` for refused readings, `verdict` `refused` and `reason`, plus `time`,
/// `serial`, `design`, `retest`, and `typed`: the readings as typed, in manual mode).
pub fn refused_record(
    serial: &str,
    design: &str,
    hash: u64,
    reason: &str,
    typed: Option<&str>,
    time: &str,
    retest: bool,
) -> Value {
    let mut doc = json!({
        "verdict": "refused",
        "reason": reason,
        "time": time,
        "serial": serial,
        "design": {"id": design, "hash": format!("{hash:016x}")},
        "retest": retest,
    });
    if let (Some(t), Some(obj)) = (typed, doc.as_object_mut()) {
        obj.insert("typed".into(), json!(t));
        if let Some([vcc, vb, ve, vc]) = typed_readings(t) {
            obj.insert(
                "readings".into(),
                json!({"vcc": vcc, "vb": vb, "ve": ve, "vc": vc}),
            );
        }
    }
    doc
}

/// The readings of a typed line when it is four plain numbers in volts (VCC VB VE VC).
fn typed_readings(typed: &str) -> Option<[f64; 4]> {
    let v: Vec<f64> = typed
        .split_whitespace()
        .map(|w| w.parse::<f64>().ok().filter(|x| x.is_finite()))
        .collect::<Option<_>>()?;
    v.try_into().ok()
}

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

fn big(word: &str) -> String {
    let spaced: String = word.chars().flat_map(|c| [c, ' ']).collect();
    let bar = "#".repeat(spaced.len() + 8);
    format!("{bar}\n##  {}  ##\n{bar}\n", spaced.trim_end())
}

/// The faults of a machine reply (`fault=PART mode=MODE score= estimate= equivalent=P:M,...`).
pub fn listed_faults(reply: &Reply) -> Vec<Listed> {
    let mut v = Vec::new();
    for l in reply.data.iter().filter(|l| l.starts_with("fault=")) {
        let get = |k: &str| {
            l.split(' ')
                .find_map(|kv| kv.strip_prefix(k).and_then(|r| r.strip_prefix('=')))
        };
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

/// Status codes that say the typed line was not readings (typing errors: ask again, log nothing).
const NOT_READINGS: [&str; 6] = [
    "USAGE", "VALUE", "UNKNOWN", "TOO_LONG", "CONTROL", "ENCODING",
];

/// The code word of an `err CODE text` status.
fn code_of(status: &str) -> &str {
    status
        .strip_prefix("err ")
        .and_then(|r| r.split(' ').next())
        .unwrap_or("")
}

/// A typed readings line the station sends: four words, no control characters (a CR inside
/// would make a second command).
fn readings_line(typed: &str) -> Result<String, String> {
    if typed.chars().any(char::is_control) {
        return Err("control characters in the line".into());
    }
    let words: Vec<&str> = typed.split_whitespace().collect();
    if words.len() != 4 {
        return Err(format!(
            "{} word{}; four readings are needed: VCC VB VE VC",
            words.len(),
            if words.len() == 1 { "" } else { "s" }
        ));
    }
    Ok(format!("check {}", words.join(" ")))
}

/// Serial numbers already in the log, with how many records each has (none without a log).
fn serials_in(log: Option<&Path>) -> HashMap<String, usize> {
    let Some(log) = log else {
        return HashMap::new();
    };
    let mut seen = HashMap::new();
    if log.exists() {
        // Tests only: a repair record in the log names the serial too.
        let _ = boardlog::for_each(
            log,
            |_, r| {
                if let (Some(s), None) = (r["serial"].as_str(), r.get("kind")) {
                    *seen.entry(s.to_owned()).or_insert(0) += 1;
                }
                Ok(())
            },
            |_| {},
        );
    }
    seen
}

/// Run the loop: serial numbers (and, manual, readings) from `input`; every record (judged or
/// refused) goes through `sink` to the log and the store, with station, operator and lot. A
/// serial number already in the log, in the store with this design, or done in this run is said
/// so and its record marked `retest`. Manual: a line
/// that is not readings (a typing error) asks for the readings again; readings the instrument
/// refuses (`IMPLAUSIBLE`) are logged as refused with the reason, and the readings are asked
/// again (an empty line goes on to the next board). Instrument: a refused board (`IMPLAUSIBLE`,
/// `JIG`) is logged as refused and the loop goes on. Returns the boards judged.
pub fn run_loop<P: Port, F: FnMut() -> Result<P, LinkError>>(
    st: &mut Station<P, F>,
    mut input: impl BufRead,
    out: &mut impl Write,
    sink: &mut StationSink,
    manual: bool,
) -> Result<usize, CliError> {
    let mut boards = 0;
    let mut seen = serials_in(sink.log.as_deref());
    let mut ask = |out: &mut dyn Write, prompt: &str| -> Result<Option<String>, CliError> {
        write!(out, "{prompt}").ok();
        out.flush().ok();
        let mut l = Vec::new();
        let n = input
            .read_until(b'\n', &mut l)
            .map_err(|e| CliError::usage(format!("stdin: {e}")))?;
        Ok((n > 0).then(|| String::from_utf8_lossy(&l).trim().to_owned()))
    };
    'boards: while let Some(serial) = ask(out, "serial number (empty to stop): ")? {
        if serial.is_empty() {
            break;
        }
        if serial.chars().any(char::is_control) {
            writeln!(out, "not a serial number: control characters in {serial:?}").ok();
            continue;
        }
        if serial.split_whitespace().nth(1).is_some() {
            // Readings typed at the serial prompt would otherwise become a board's name.
            writeln!(
                out,
                "not a serial number: {serial:?} has spaces (readings are asked for after the \
                 serial number); type the serial number"
            )
            .ok();
            continue;
        }
        let in_log = seen.get(&serial).copied().unwrap_or(0);
        let in_store = sink.earlier_tests(&serial, &format!("{:016x}", st.hash))?;
        let (earlier, place) = if in_store > in_log {
            (in_store, "store")
        } else {
            (in_log, "log")
        };
        let retest = earlier > 0;
        if retest {
            writeln!(
                out,
                "board {serial} was tested before ({earlier} record{} in the {place}): this test \
                 is recorded as a retest",
                if earlier == 1 { "" } else { "s" }
            )
            .ok();
        }
        // A refusal of this board is already on record (the empty line then only moves on).
        let mut refusal_logged = false;
        let reply = loop {
            let (action, typed) = if manual {
                let Some(r) = ask(out, "readings VCC VB VE VC (empty: next board): ")? else {
                    break 'boards;
                };
                if r.is_empty() {
                    if refusal_logged {
                        writeln!(out, "board {serial}: logged as refused; next board").ok();
                    } else {
                        writeln!(out, "board {serial}: no readings, not logged").ok();
                    }
                    continue 'boards;
                }
                match readings_line(&r) {
                    Ok(a) => (a, Some(r)),
                    Err(why) => {
                        writeln!(out, "not readings: {why}; type them again").ok();
                        continue;
                    }
                }
            } else {
                ("test".to_owned(), None)
            };
            match st.board(&action) {
                Ok(r) => break r,
                Err(BoardError::Refused(status)) if NOT_READINGS.contains(&code_of(&status)) => {
                    if !manual {
                        return Err(CliError::link(format!("instrument: {status}")));
                    }
                    writeln!(out, "not readings: {status}; type them again").ok();
                }
                Err(BoardError::Refused(status))
                    if manual || ["IMPLAUSIBLE", "JIG"].contains(&code_of(&status)) =>
                {
                    let reason = status.strip_prefix("err ").unwrap_or(&status).to_owned();
                    sink.write_value(st.stamp(refused_record(
                        &serial,
                        st.design_id(),
                        st.hash,
                        &reason,
                        typed.as_deref(),
                        &boardlog::now_utc(),
                        retest,
                    )))?;
                    *seen.entry(serial.clone()).or_insert(0) += 1;
                    refusal_logged = true;
                    writeln!(
                        out,
                        "{}not checked, logged as refused: {reason}",
                        big("REFUSED")
                    )
                    .ok();
                    if !manual {
                        continue 'boards;
                    }
                    writeln!(out, "type the readings again (empty: next board)").ok();
                }
                Err(BoardError::Refused(m)) => {
                    return Err(CliError::link(format!("instrument: {m}")))
                }
                Err(BoardError::Link(e)) => return Err(link_error(e)),
            }
        };
        let time = boardlog::now_utc();
        sink.write_value(st.stamp(record(
            &serial,
            st.design_id(),
            st.hash,
            &reply,
            &time,
            retest,
        )))?;
        *seen.entry(serial.clone()).or_insert(0) += 1;
        write!(out, "{}", banner(&st.stage, &reply)).ok();
        boards += 1;
    }
    Ok(boards)
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        let budget = sync_budget(self.sync_timeout)?;
        let doc = designfile::load(&self.design)?;
        if let Some(name) = &self.keep {
            if biasjig_core::console::parse::Name::parse(name).is_none() {
                return Err(CliError::field(
                    "--keep",
                    name,
                    "a name of 1 to 16 letters, digits, - _ or .",
                ));
            }
        }
        let (settings, overrides) = self.test_settings(doc.test)?;
        let prov = provenance(&settings, overrides, &doc.digest);
        let push = push_lines(&doc.stage, &doc.profile, &settings);
        let (digest, hash) = expected(&doc.stage, &doc.profile, &settings).ok_or_else(|| {
            CliError::field(
                "--design",
                self.design.display(),
                "a stage the console accepts",
            )
        })?;
        // Inputs stated by neither the design file nor a flag: the instrument's own.
        let adopt = doc.test.inputs.r.is_none() && self.inputs.input_r.is_none();
        let mode_stated = self.inputs.inputs.is_some();
        let stdin = std::io::stdin();
        let mut out = std::io::stderr();
        let boards = if self.manual {
            let (host, unit) = MemoryPort::pair();
            std::thread::spawn(move || serve(unit));
            let mut host = Some(host);
            let mut st = Station::new(
                move || {
                    host.take()
                        .ok_or(LinkError::Disconnected("in-process console".into()))
                },
                push,
                digest,
                hash,
                prov.clone(),
                doc.id.clone(),
                doc.stage,
                budget,
            )
            .map_err(link_error)?;
            if adopt {
                st = st.inputs_from_unit(doc.profile, settings, mode_stated);
            }
            st = st.keep_as(self.keep.clone());
            st.prepare().map_err(board_err)?;
            let mut sink = StationSink::open(Some(&self.log), &self.trace)?;
            run_loop(&mut st, stdin.lock(), &mut out, &mut sink, true)?
        } else {
            let path = self.port.clone().unwrap_or_default();
            let baud = self.baud;
            let mut st = Station::new(
                || SerialLink::open(&path, baud),
                push,
                digest,
                hash,
                prov.clone(),
                doc.id.clone(),
                doc.stage,
                budget,
            )
            .map_err(link_error)?;
            if adopt {
                st = st.inputs_from_unit(doc.profile, settings, mode_stated);
            }
            st = st.keep_as(self.keep.clone());
            let id = st.prepare().map_err(board_err)?;
            let inputs = if adopt { st.inputs() } else { settings.inputs };
            eprintln!(
                "instrument: {id}; design {} and test settings verified (settings digest {}); \
                 measuring inputs {}{}",
                doc.id,
                st.digest(),
                inputs
                    .r
                    .map_or("none (an ideal meter)".to_string(), |r| format!(
                        "{r} Ω to ground, {}",
                        inputs.mode.name()
                    )),
                if adopt { " (the instrument's own)" } else { "" }
            );
            let mut sink = StationSink::open(Some(&self.log), &self.trace)?;
            sink.firmware = Some(id.to_string());
            run_loop(&mut st, stdin.lock(), &mut out, &mut sink, false)?
        };
        eprintln!(
            "{boards} boards judged and logged to {}{}",
            self.log.display(),
            if self.trace.store.is_some() {
                " and the results store"
            } else {
                ""
            }
        );
        Ok(EXIT_OK)
    }
}

fn board_err(e: BoardError) -> CliError {
    match e {
        BoardError::Link(l) => link_error(l),
        BoardError::Refused(m) => CliError::link(format!("instrument: {m}")),
    }
}

/// Serve the in-process console engine on one end of a memory pair (manual mode).
pub fn serve(mut port: MemoryPort) {
    let mut c = local_console();
    let mut buf = [0u8; 256];
    let mut out = Vec::new();
    loop {
        match port.recv(&mut buf, Duration::from_secs(3600)) {
            Ok(0) => continue,
            Ok(n) => {
                out.clear();
                let _ = c.feed(
                    &buf[..n],
                    &mut embedded_io_adapters::std::FromStd::new(&mut out),
                );
                if port.send(&out).is_err() {
                    return;
                }
            }
            Err(_) => return,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use biasjig_core::console::jig::MemoryStore;
    use biasjig_core::console::{default_profile, default_stage, Console, Identity, Jig, JigError};
    use biasjig_core::solve::{solve, Conditions};
    use biasjig_core::stage::{Fault, Readings, Resistor};
    use embedded_io_adapters::std::FromStd;
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Arc;

    use crate::cmd::console::StdClock;

    /// The stage the station pushes in these tests.
    fn pushed() -> Stage {
        let mut stage = default_stage();
        stage.r1.value = 56e3;
        stage
    }

    /// Board i is a good board when i is even and has R2 open when i is odd: its readings are
    /// the engine's operating point of the pushed stage with that fault.
    struct Boards(Arc<AtomicUsize>);

    impl Jig for Boards {
        fn measure(&mut self, _samples: u16) -> Result<Readings, JigError> {
            let i = self.0.load(Ordering::SeqCst);
            let stage = pushed();
            let board = if i % 2 == 0 {
                stage
            } else {
                stage.with_fault(Fault::Open(Resistor::R2))
            };
            let p = default_profile();
            let op = solve(&board, &p, Conditions::typical(&p)).map_err(|_| JigError::Hardware)?;
            Ok(Readings {
                vcc: stage.vcc.value,
                vb: op.vb,
                ve: op.ve,
                vc: op.vc,
            })
        }
    }

    fn engine(board: Arc<AtomicUsize>) -> Console<Boards, MemoryStore, StdClock> {
        Console::new(
            Identity::new("fake", "1"),
            Boards(board),
            MemoryStore::default(),
            StdClock::default(),
        )
    }

    /// The fake instrument: the real console engine behind a memory pair; `test` is the
    /// engine's own (measure, check, diagnose). Every `reset_every`-th `test` it resets instead
    /// (forgets the design, says a boot line of garbage, answers nothing); every
    /// `garbage_every`-th `test` it answers garbage first.
    fn instrument(
        mut port: MemoryPort,
        board: Arc<AtomicUsize>,
        reset_every: usize,
        garbage_every: usize,
    ) {
        let mut c = engine(board.clone());
        let mut tests = 0;
        let mut pending = Vec::new();
        let mut buf = [0u8; 256];
        loop {
            let n = match port.recv(&mut buf, Duration::from_secs(30)) {
                Ok(0) => continue,
                Ok(n) => n,
                Err(_) => return,
            };
            pending.extend_from_slice(&buf[..n]);
            while let Some(pos) = pending.iter().position(|b| *b == b'\n') {
                let line: Vec<u8> = pending.drain(..=pos).collect();
                let text = String::from_utf8_lossy(&line[..pos]).trim().to_owned();
                let mut out = Vec::new();
                if text == "test" {
                    tests += 1;
                    if tests % reset_every == 0 {
                        c = engine(board.clone());
                        pending.clear();
                        let _ = port.send(b"\xff\xfe\x00boot\r\n");
                        break;
                    }
                    if tests % garbage_every == 0 {
                        out.extend_from_slice(b"\x01\x02garbage\r\n");
                    }
                }
                c.line(&text, &mut FromStd::new(&mut out)).unwrap();
                if port.send(&out).is_err() {
                    return;
                }
            }
        }
    }

    #[test]
    fn resets_and_garbage_lose_no_record() {
        let (host, unit) = MemoryPort::pair();
        let board = Arc::new(AtomicUsize::new(0));
        let b2 = board.clone();
        std::thread::spawn(move || instrument(unit, b2, 4, 3));
        let stage = pushed();
        let profile = default_profile();
        let settings = TestSettings::DEFAULT;
        let (digest, hash) = expected(&stage, &profile, &settings).unwrap();
        let mut host = Some(host.clone());
        let keep = host.clone();
        let mut st = Station::new(
            move || Ok(host.take().or_else(|| keep.clone()).unwrap()),
            push_lines(&stage, &profile, &settings),
            digest.clone(),
            hash,
            provenance(&settings, json!({}), "file-digest"),
            "demo-1".into(),
            stage,
            Duration::from_secs(5),
        )
        .unwrap();
        st.set_reply_timeout(Duration::from_millis(1500));
        st.prepare().unwrap();
        let dir = std::env::temp_dir().join(format!("biasjig-station-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let log = dir.join("boards.jsonl");
        let _ = std::fs::remove_file(&log);
        // Serial numbers typed; the board counter follows the serial (board i is SN-i).
        struct Feed(Arc<AtomicUsize>, usize, Vec<u8>, usize);
        impl std::io::Read for Feed {
            fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
                if self.3 >= self.2.len() {
                    if self.1 >= 12 {
                        return Ok(0);
                    }
                    self.0.store(self.1, Ordering::SeqCst);
                    self.2 = format!("SN-{}\n", self.1).into_bytes();
                    self.3 = 0;
                    self.1 += 1;
                }
                let n = buf.len().min(self.2.len() - self.3);
                buf[..n].copy_from_slice(&self.2[self.3..self.3 + n]);
                self.3 += n;
                Ok(n)
            }
        }
        let input = std::io::BufReader::with_capacity(1, Feed(board, 0, Vec::new(), 0));
        let mut screen = Vec::new();
        let mut sink = StationSink::open(Some(&log), &TraceArgs::default()).unwrap();
        let n = run_loop(&mut st, input, &mut screen, &mut sink, false).unwrap();
        assert_eq!(n, 12);
        assert!(st.resyncs >= 2, "resets happened: {}", st.resyncs);
        let c = boardlog::read(&log).unwrap();
        assert!(c.warnings.is_empty(), "{:?}", c.warnings);
        let recs = c.records;
        assert_eq!(recs.len(), 12, "no record lost or doubled");
        for (i, r) in recs.iter().enumerate() {
            assert_eq!(r["serial"], format!("SN-{i}"));
            assert_eq!(r["verdict"], if i % 2 == 0 { "pass" } else { "fail" });
            assert_eq!(r["design"]["hash"], format!("{hash:016x}"));
            assert_eq!(r["digest"], digest.as_str());
            assert_eq!(r["design"]["digest"], "file-digest");
            assert_eq!(r["settings"]["temp_min"], 25.0);
            assert_eq!(r["design"]["id"], "demo-1");
            assert!(r["time"].as_str().unwrap().ends_with('Z'), "{r}");
            assert_eq!(r["readings"]["vcc"], 12.0);
            assert_eq!(r["nodes"].as_object().unwrap().len(), 6);
            assert!(r["derived"]["region"].is_string());
            if i % 2 == 1 {
                let f = &r["faults"][0];
                let named = f["part"] == "R2"
                    || f["equivalent"]
                        .as_array()
                        .unwrap()
                        .iter()
                        .any(|e| e["part"] == "R2");
                assert!(named, "R2 open named first: {r}");
                assert!(r["explained"].is_boolean());
            } else {
                assert_eq!(r["faults"].as_array().unwrap().len(), 0);
            }
        }
        let shown = String::from_utf8(screen).unwrap();
        assert!(
            shown.contains("P A S S") && shown.contains("F A I L"),
            "{shown}"
        );
    }

    #[test]
    fn gain_lines_go_into_the_record_as_check_gives_them() {
        let reply = crate::link::Reply {
            data: vec![
                "vcc=12 vb=2.05 ve=1.39 vc=5.74 source=measured".into(),
                "verdict=fail explained=1".into(),
                "ac f=30 measured=2.68 low=13.25 high=16.61 ok=0".into(),
                "ac f=1 measured=2.44 low=3.15 high=5.03 ok=0".into(),
                "fault=CE mode=open score=1 estimate=none equivalent=none".into(),
            ],
            status: "ok".into(),
        };
        let r = record("S1", "d", 7, &reply, "t", false);
        assert_eq!(r["ac"][0]["f"], 30.0);
        assert_eq!(r["ac"][1]["measured"], 2.44);
        assert_eq!(r["ac"][1]["ok"], false);
        assert_eq!(r["faults"][0]["part"], "CE");
        // Without gain lines there is no "ac" key (as check without --ac).
        let dc = crate::link::Reply {
            data: vec!["verdict=pass".into()],
            status: "ok".into(),
        };
        assert!(record("S2", "d", 7, &dc, "t", false).get("ac").is_none());
    }

    #[test]
    fn pushed_design_hash_matches_the_design_file_hash() {
        let stage = pushed();
        let profile = default_profile();
        let settings = TestSettings {
            temp_min_c: -10.0,
            temp_max_c: 55.0,
            ..TestSettings::DEFAULT
        };
        let (d, h) = expected(&stage, &profile, &settings).unwrap();
        assert_eq!(h, design_hash(&stage, &profile));
        assert_eq!(format!("{h:016x}"), designfile::hash(&stage, &profile));
        assert_eq!(d, digest(&stage, &profile, &settings).to_string());
    }

    /// Every setting the verdict depends on is pushed: each one changed alone changes the
    /// digest the instrument reports after the push, and the digest of the pushed lines is the
    /// core's digest of the values.
    #[test]
    fn every_setting_is_pushed_and_covered_by_the_digest() {
        let stage = pushed();
        let profile = default_profile();
        let base = TestSettings::DEFAULT;
        let mut variants = vec![base];
        let mut t = base;
        t.temp_min_c = 0.0;
        t.temp_max_c = 40.0;
        variants.push(t);
        let mut t = base;
        t.meter.gain_error = 0.01;
        variants.push(t);
        let mut t = base;
        t.meter.offset = 0.002;
        variants.push(t);
        let mut t = base;
        t.meter.divider_tol = 0.005;
        variants.push(t);
        let mut t = base;
        t.inputs.r = Some(110e3);
        variants.push(t);
        let mut t = base;
        t.inputs.r = Some(110e3);
        t.inputs.mode = InputMode::One;
        variants.push(t);
        let mut s2 = stage;
        s2.vcc.tol = 0.1;
        let mut p2 = profile;
        p2.beta_min = 100.0;
        p2.beta_max = 300.0;
        let mut seen = std::collections::HashSet::new();
        for (st, pr, ts) in variants
            .iter()
            .map(|t| (stage, profile, *t))
            .chain([(s2, profile, base), (stage, p2, base)])
        {
            let (d, _) = expected(&st, &pr, &ts).unwrap();
            assert_eq!(d, digest(&st, &pr, &ts).to_string(), "{ts:?}");
            assert!(seen.insert(d), "a setting not covered: {ts:?}");
        }
    }

    /// A unit that holds other settings (another ambient, meter and inputs) is pushed to the
    /// station's before any board, and a unit that changes behind the station's back makes it
    /// push again.
    #[test]
    fn a_unit_with_other_settings_is_pushed_before_the_lot() {
        let (host, unit) = MemoryPort::pair();
        std::thread::spawn(move || serve(unit));
        let stage = pushed();
        let profile = default_profile();
        let settings = TestSettings {
            temp_min_c: 10.0,
            temp_max_c: 40.0,
            meter: biasjig_core::limits::Meter {
                gain_error: 0.01,
                offset: 0.002,
                divider_tol: 0.002,
            },
            inputs: biasjig_core::settings::Inputs {
                r: Some(1e6),
                mode: InputMode::Together,
            },
            signal: biasjig_core::signaltest::SignalMeter::DEFAULT,
        };
        let (digest, hash) = expected(&stage, &profile, &settings).unwrap();
        let mut link = Link::new(host.clone());
        link.sync(Duration::from_secs(5)).unwrap();
        assert!(link.command("mode machine").unwrap().ok());
        // The unit holds the same stage with another meter and ambient: the old stage hash alone
        // would have let this pass.
        for l in push_lines(&stage, &profile, &TestSettings::DEFAULT) {
            assert!(link.command(&l).unwrap().ok(), "{l}");
        }
        let r = link.command("hash").unwrap();
        assert_eq!(r.value("hash"), Some(format!("{hash:016x}").as_str()));
        let mut h = Some(host);
        let mut st = Station::new(
            move || h.take().ok_or(LinkError::Disconnected("gone".into())),
            push_lines(&stage, &profile, &settings),
            digest.clone(),
            hash,
            provenance(&settings, json!({}), "file-digest"),
            "demo-1".into(),
            stage,
            Duration::from_secs(5),
        )
        .unwrap();
        st.prepare().unwrap();
        assert!(st.digest_ok().unwrap());
        let r = st.link.command("meter").unwrap();
        assert_eq!(r.value("gain"), Some("0.01"), "{r:?}");
        // Changed behind the station's back: the board is not judged under it.
        assert!(st.link.command("set temp-max 50").unwrap().ok());
        assert!(!st.digest_ok().unwrap());
    }

    /// A jig whose probe is open on every board whose number is a multiple of 3.
    struct OpenProbeEvery3(Arc<AtomicUsize>);

    impl Jig for OpenProbeEvery3 {
        fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
            if self.0.load(Ordering::SeqCst) % 3 == 0 {
                return Err(JigError::OpenProbe(biasjig_core::console::Channel::Vb));
            }
            Boards(self.0.clone()).measure(samples)
        }
    }

    /// An instrument run goes on past a board the jig cannot read: it is logged as refused with
    /// the unit's reason, and the next boards are judged.
    #[test]
    fn a_refused_board_is_logged_and_the_run_goes_on() {
        let (host, mut unit) = MemoryPort::pair();
        let board = Arc::new(AtomicUsize::new(1));
        let b2 = board.clone();
        std::thread::spawn(move || {
            let mut c = Console::new(
                Identity::new("fake", "1"),
                OpenProbeEvery3(b2),
                MemoryStore::default(),
                StdClock::default(),
            );
            let mut buf = [0u8; 256];
            while let Ok(n) = unit.recv(&mut buf, Duration::from_secs(30)) {
                let mut out = Vec::new();
                let _ = c.feed(&buf[..n], &mut FromStd::new(&mut out));
                if unit.send(&out).is_err() {
                    return;
                }
            }
        });
        let stage = pushed();
        let profile = default_profile();
        let settings = TestSettings::DEFAULT;
        let (digest, hash) = expected(&stage, &profile, &settings).unwrap();
        let mut h = Some(host);
        let mut st = Station::new(
            move || h.take().ok_or(LinkError::Disconnected("gone".into())),
            push_lines(&stage, &profile, &settings),
            digest,
            hash,
            provenance(&settings, json!({}), "file-digest"),
            "demo-1".into(),
            stage,
            Duration::from_secs(5),
        )
        .unwrap();
        st.prepare().unwrap();
        let dir = std::env::temp_dir().join(format!("biasjig-refused-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let log = dir.join("boards.jsonl");
        let _ = std::fs::remove_file(&log);
        // Serials SN-2, SN-3 (open probe), SN-4; the jig's board follows the serial.
        struct Feed(Arc<AtomicUsize>, Vec<&'static str>);
        impl std::io::Read for Feed {
            fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
                let Some(s) = self.1.first().copied() else {
                    return Ok(0);
                };
                self.1.remove(0);
                if let Some(n) = s.strip_prefix("SN-").and_then(|n| n.trim().parse().ok()) {
                    self.0.store(n, Ordering::SeqCst);
                }
                buf[..s.len()].copy_from_slice(s.as_bytes());
                Ok(s.len())
            }
        }
        let input =
            std::io::BufReader::with_capacity(64, Feed(board, vec!["SN-2\n", "SN-3\n", "SN-4\n"]));
        let mut screen = Vec::new();
        let mut sink = StationSink::open(Some(&log), &TraceArgs::default()).unwrap();
        let n = run_loop(&mut st, input, &mut screen, &mut sink, false).unwrap();
        assert_eq!(n, 2, "two boards judged");
        let recs = boardlog::read(&log).unwrap().records;
        let v: Vec<(&str, &str)> = recs
            .iter()
            .map(|r| {
                (
                    r["serial"].as_str().unwrap(),
                    r["verdict"].as_str().unwrap(),
                )
            })
            .collect();
        assert_eq!(v, [("SN-2", "pass"), ("SN-3", "refused"), ("SN-4", "pass")]);
        let reason = recs[1]["reason"].as_str().unwrap();
        assert!(
            reason.starts_with("JIG") && reason.contains("open"),
            "{reason}"
        );
        let shown = String::from_utf8(screen).unwrap();
        assert!(shown.contains("R E F U S E D"), "{shown}");
    }

    /// A jig reader whose inputs load every node with 11 MΩ.
    struct LoadingJig(Arc<AtomicUsize>);

    impl Jig for LoadingJig {
        fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
            Boards(self.0.clone()).measure(samples)
        }
        fn input_r(&self) -> Option<f64> {
            Some(11e6)
        }
    }

    /// With no measuring inputs stated, the station judges with the instrument's own (its jig's
    /// dividers), pushes them back as they are, and the digest and records carry them.
    #[test]
    fn unstated_inputs_are_the_instruments_own() {
        let (host, mut unit) = MemoryPort::pair();
        std::thread::spawn(move || {
            let mut c = Console::new(
                Identity::new("fake", "1"),
                LoadingJig(Arc::new(AtomicUsize::new(0))),
                MemoryStore::default(),
                StdClock::default(),
            );
            let mut buf = [0u8; 256];
            while let Ok(n) = unit.recv(&mut buf, Duration::from_secs(30)) {
                let mut out = Vec::new();
                let _ = c.feed(&buf[..n], &mut FromStd::new(&mut out));
                if unit.send(&out).is_err() {
                    return;
                }
            }
        });
        let stage = pushed();
        let profile = default_profile();
        let settings = TestSettings::DEFAULT;
        let (digest0, hash) = expected(&stage, &profile, &settings).unwrap();
        let mut h = Some(host);
        let mut st = Station::new(
            move || h.take().ok_or(LinkError::Disconnected("gone".into())),
            push_lines(&stage, &profile, &settings),
            digest0.clone(),
            hash,
            provenance(&settings, json!({}), "file-digest"),
            "demo-1".into(),
            stage,
            Duration::from_secs(5),
        )
        .unwrap()
        .inputs_from_unit(profile, settings, false);
        st.prepare().unwrap();
        assert_eq!(st.inputs().r, Some(11e6));
        let with_jig = TestSettings {
            inputs: biasjig_core::settings::Inputs {
                r: Some(11e6),
                mode: InputMode::Together,
            },
            ..settings
        };
        assert_eq!(st.digest(), digest(&stage, &profile, &with_jig).to_string());
        assert_ne!(st.digest(), digest0);
        let r = st.link.command("meter").unwrap();
        assert_eq!(r.value("input_r"), Some("1.1e7"), "{r:?}");
        let rec = st.stamp(json!({"design": {}}));
        assert_eq!(rec["settings"]["inputs"]["r"], 11e6);
    }
}
