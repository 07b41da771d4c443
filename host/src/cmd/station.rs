//! `biasjig station`: the technician's loop. Push the design to the instrument and verify it
//! took (design hash), then per board: read the serial number, trigger measure and check, show
//! the verdict large with the likely fault, append one complete JSON line to the log.
//!
//! An instrument reset, a timeout or garbage on the line makes the station synchronise again,
//! push the design again and repeat the board; a record is written only from one complete,
//! verified reply, once, so nothing is lost or doubled. `--manual` runs the same loop against
//! the console engine in this process, with the readings typed from a meter.
//!
//! The log is the board log of `biasjig check --log` ([`crate::boardlog`]: append-only JSON
//! Lines, torn tails skipped), and each record has the shape of `biasjig check --json` plus
//! `time`, `serial`, `design` (`id`, `hash`) and `readings`.

use std::io::{BufRead, Write};
use std::path::PathBuf;
use std::time::Duration;

use biasjig_core::console::record::design_hash;
use biasjig_core::device::Profile;
use biasjig_core::stage::{Polarity, Resistor, Stage};
use serde_json::{json, Map, Value};

use crate::board::StationSink;
use crate::boardlog;
use crate::cmd::console::{link_error, local_console, sync_budget};
use crate::designfile;
use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::link::{Link, LinkError, MemoryPort, Port, Reply, SerialLink};
use crate::store::TraceArgs;
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
    #[command(flatten)]
    pub trace: TraceArgs,
}

/// The ambient of a design: nominal, lowest and highest, °C.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ambient {
    /// Nominal ambient, °C.
    pub nominal: f64,
    /// Lowest ambient, °C.
    pub min: f64,
    /// Highest ambient, °C.
    pub max: f64,
}

impl Ambient {
    /// One ambient, no range.
    #[cfg(test)]
    pub fn at(t: f64) -> Self {
        Self {
            nominal: t,
            min: t,
            max: t,
        }
    }
}

/// The `set` lines that put a stage, profile and ambient range on the instrument (exact values:
/// shortest round-trip decimal forms).
pub fn push_lines(stage: &Stage, profile: &Profile, ambient: Ambient) -> Vec<String> {
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
    // `set temp` collapses the range; then widen it.
    v.push(format!("set temp {:e}", ambient.nominal));
    v.push(format!("set temp-min {:e}", ambient.min));
    v.push(format!("set temp-max {:e}", ambient.max));
    v
}

/// The stage and profile exactly as the instrument holds them after [`push_lines`] (the text
/// forms are parsed the same way), for the hash check.
pub fn expected_hash(stage: &Stage, profile: &Profile, ambient: Ambient) -> Option<u64> {
    let mut c = local_console();
    let mut sink = Vec::new();
    for l in push_lines(stage, profile, ambient) {
        let mut out = embedded_io_adapters::std::FromStd::new(&mut sink);
        c.line(&l, &mut out).ok()?;
    }
    let text = String::from_utf8_lossy(&sink);
    if text.lines().any(|l| l.starts_with("err ")) {
        return None;
    }
    Some(design_hash(&c.settings().stage, &c.settings().profile))
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
    hash: u64,
    design_id: String,
    budget: Duration,
    /// Resynchronisations done (resets, timeouts, garbage).
    pub resyncs: usize,
}

impl<P: Port, F: FnMut() -> Result<P, LinkError>> Station<P, F> {
    /// A station on the port `reopen` opens; `push` are the `set` lines, `hash` the design hash
    /// they give.
    pub fn new(
        mut reopen: F,
        push: Vec<String>,
        hash: u64,
        design_id: String,
        budget: Duration,
    ) -> Result<Self, LinkError> {
        let port = reopen()?;
        Ok(Self {
            link: Link::new(port),
            reopen,
            push,
            hash,
            design_id,
            budget,
            resyncs: 0,
        })
    }

    fn hash_ok(&mut self) -> Result<bool, LinkError> {
        let r = self.link.command("hash")?;
        let want = format!("{:016x}", self.hash);
        Ok(r.ok() && r.value("hash") == Some(want.as_str()))
    }

    /// Synchronise, switch to machine mode, push the design and verify its hash.
    pub fn prepare(&mut self) -> Result<String, BoardError> {
        let id = self.link.sync(self.budget).map_err(BoardError::Link)?;
        for l in ["echo off", "mode machine"] {
            let r = self.link.command(l).map_err(BoardError::Link)?;
            if !r.ok() {
                return Err(BoardError::Refused(format!("{l}: {}", r.status)));
            }
        }
        if !self.hash_ok().map_err(BoardError::Link)? {
            for l in self.push.clone() {
                let r = self.link.command(&l).map_err(BoardError::Link)?;
                if !r.ok() {
                    return Err(BoardError::Refused(format!("{l}: {}", r.status)));
                }
            }
            if !self.hash_ok().map_err(BoardError::Link)? {
                return Err(BoardError::Refused(
                    "the design did not take: hash differs".into(),
                ));
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
    /// counts only when the design hash is right before and after it.
    pub fn board(&mut self, action: &str) -> Result<Reply, BoardError> {
        let mut last = None;
        for _ in 0..TRIES {
            let attempt = (|| -> Result<Result<Reply, String>, LinkError> {
                if !self.hash_ok()? {
                    return Err(LinkError::Garbage("the instrument lost the design".into()));
                }
                let r = self.link.command(action)?;
                if !self.hash_ok()? {
                    return Err(LinkError::Garbage("the instrument lost the design".into()));
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
}

fn num(s: Option<&str>) -> Value {
    s.and_then(|t| t.parse::<f64>().ok())
        .map_or(Value::Null, Value::from)
}

/// The log record of one board from the machine reply of `test`/`check`: the shape of
/// `biasjig check --json` (`verdict`, `nodes`, `derived`, `faults`, `explained` when diagnosed)
/// plus `time` (ISO 8601 UTC), `serial`, `design` (`id`, `hash`) and `readings`.
pub fn record(serial: &str, design: &str, hash: u64, reply: &Reply, time: &str) -> Value {
    let mut nodes = Map::new();
    let mut faults = Vec::new();
    let mut derived = Map::new();
    let mut readings = Map::new();
    let mut explained = None;
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
    });
    if let (Some(e), Some(obj)) = (explained, doc.as_object_mut()) {
        obj.insert("explained".into(), json!(e));
    }
    doc
}

/// The verdict, large.
pub fn banner(reply: &Reply) -> String {
    let verdict = reply.value("verdict").unwrap_or("?").to_uppercase();
    let spaced: String = verdict.chars().flat_map(|c| [c, ' ']).collect();
    let bar = "#".repeat(spaced.len() + 8);
    let mut s = format!("{bar}\n##  {}  ##\n{bar}\n", spaced.trim_end());
    if let Some(l) = reply.data.iter().find(|l| l.starts_with("fault=")) {
        s.push_str(&format!("likely fault: {l}\n"));
    }
    s
}

/// Run the loop: serial numbers (and, manual, readings) from `input`.
pub fn run_loop<P: Port, F: FnMut() -> Result<P, LinkError>>(
    st: &mut Station<P, F>,
    mut input: impl BufRead,
    out: &mut impl Write,
    sink: &mut StationSink,
    manual: bool,
) -> Result<usize, CliError> {
    let mut boards = 0;
    let mut ask = |out: &mut dyn Write, prompt: &str| -> Result<Option<String>, CliError> {
        write!(out, "{prompt}").ok();
        out.flush().ok();
        let mut l = String::new();
        let n = input
            .read_line(&mut l)
            .map_err(|e| CliError::usage(format!("stdin: {e}")))?;
        Ok((n > 0).then(|| l.trim().to_owned()))
    };
    while let Some(serial) = ask(out, "serial number (empty to stop): ")? {
        if serial.is_empty() {
            break;
        }
        let action = if manual {
            let Some(r) = ask(out, "readings VCC VB VE VC: ")? else {
                break;
            };
            format!("check {r}")
        } else {
            "test".to_owned()
        };
        let reply = match st.board(&action) {
            Ok(r) => r,
            Err(BoardError::Refused(m)) if manual => {
                writeln!(out, "not checked: {m}").ok();
                continue;
            }
            Err(BoardError::Refused(m)) => return Err(CliError::link(format!("instrument: {m}"))),
            Err(BoardError::Link(e)) => return Err(link_error(e)),
        };
        let time = boardlog::now_utc();
        sink.write_value(record(&serial, st.design_id(), st.hash, &reply, &time))?;
        write!(out, "{}", banner(&reply)).ok();
        boards += 1;
    }
    Ok(boards)
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, _g: &Global) -> CmdResult {
        let budget = sync_budget(self.sync_timeout)?;
        let doc = designfile::load(&self.design)?;
        // The test ambient the file states (what `check --design` applies), not the design's
        // operating range.
        let ambient = Ambient {
            nominal: doc.temp_c.clamp(doc.test.temp_min_c, doc.test.temp_max_c),
            min: doc.test.temp_min_c,
            max: doc.test.temp_max_c,
        };
        let push = push_lines(&doc.stage, &doc.profile, ambient);
        let hash = expected_hash(&doc.stage, &doc.profile, ambient).ok_or_else(|| {
            CliError::field(
                "--design",
                self.design.display(),
                "a stage the console accepts",
            )
        })?;
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
                hash,
                doc.id.clone(),
                budget,
            )
            .map_err(link_error)?;
            st.prepare().map_err(board_err)?;
            let mut sink = StationSink::open(Some(&self.log), &self.trace)?;
            run_loop(&mut st, stdin.lock(), &mut out, &mut sink, true)?
        } else {
            let path = self.port.clone().unwrap_or_default();
            let baud = self.baud;
            let mut st = Station::new(
                || SerialLink::open(&path, baud),
                push,
                hash,
                doc.id.clone(),
                budget,
            )
            .map_err(link_error)?;
            let id = st.prepare().map_err(board_err)?;
            eprintln!("instrument: {id}; design {} pushed and verified", doc.id);
            let mut sink = StationSink::open(Some(&self.log), &self.trace)?;
            sink.firmware = Some(id.to_string());
            run_loop(&mut st, stdin.lock(), &mut out, &mut sink, false)?
        };
        eprintln!("{boards} boards logged to {}", self.log.display());
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
        let ambient = Ambient::at(25.0);
        let hash = expected_hash(&stage, &profile, ambient).unwrap();
        let mut host = Some(host.clone());
        let keep = host.clone();
        let mut st = Station::new(
            move || Ok(host.take().or_else(|| keep.clone()).unwrap()),
            push_lines(&stage, &profile, ambient),
            hash,
            "demo-1".into(),
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
        let mut sink = crate::board::StationSink::open(Some(&log), &TraceArgs::default()).unwrap();
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
    fn pushed_design_hash_matches_the_design_file_hash() {
        let stage = pushed();
        let profile = default_profile();
        let ambient = Ambient {
            nominal: 25.0,
            min: -10.0,
            max: 55.0,
        };
        let h = expected_hash(&stage, &profile, ambient).unwrap();
        assert_eq!(h, design_hash(&stage, &profile));
        assert_eq!(format!("{h:016x}"), designfile::hash(&stage, &profile));
    }
}
