//! The station's session with the instrument: synchronise, push and verify the settings
//! digest, then one board at a time with the digest right before and after its reply.

use std::time::Duration;

use biasjig_core::device::Profile;
use biasjig_core::settings::{InputMode, Inputs, TestSettings};
use biasjig_core::stage::Stage;
use serde_json::{json, Value};
use thiserror::Error;

use super::push::{expected, push_lines};
use super::run::code_of;
use crate::link::{Link, LinkError, Port, Reply};

/// Tries per board before the station gives up.
const TRIES: usize = 3;

/// Why one board could not be done (exit 3).
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum BoardError {
    /// The link failed (the station resynchronises and tries again).
    #[error(transparent)]
    Link(LinkError),
    /// The instrument refused (an `err` status): not worth repeating.
    #[error("instrument: {0}")]
    Refused(String),
}

/// What a station puts on the instrument and carries into every record.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The lines that put the design and the test settings on the instrument ([`push_lines`]).
    pub push: Vec<String>,
    /// The settings digest they give (64 hex digits, [`expected`]).
    pub digest: String,
    /// The design hash (stage and transistor), for the log.
    pub hash: u64,
    /// What each record carries besides the board: `settings`, `overrides`, and the design
    /// file's digest ([`super::provenance`]).
    pub provenance: Value,
    /// The design identifier, for the log.
    pub design_id: String,
    /// The stage pushed (for the fault words on the screen).
    pub stage: Stage,
    /// Synchronisation budget.
    pub budget: Duration,
}

impl Plan {
    /// The plan for `stage`, `profile` and `settings`: the lines to push and the digest and
    /// hash they give (`None` when the console engine refuses them).
    pub fn new(
        stage: Stage,
        profile: &Profile,
        settings: &TestSettings,
        provenance: Value,
        design_id: String,
        budget: Duration,
    ) -> Option<Self> {
        let (digest, hash) = expected(&stage, profile, settings)?;
        Some(Self {
            push: push_lines(&stage, profile, settings),
            digest,
            hash,
            provenance,
            design_id,
            stage,
            budget,
        })
    }
}

/// The technician's loop over any port.
pub struct Station<P: Port, F: FnMut() -> Result<P, LinkError>> {
    pub(super) link: Link<P>,
    reopen: F,
    /// What is pushed and recorded (the lines, digest and hash follow the instrument's own
    /// measuring inputs when they are taken).
    plan: Plan,
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
    /// A station carrying out `plan` on the port `reopen` opens (and opens again after a
    /// failure).
    pub fn new(mut reopen: F, plan: Plan) -> Result<Self, LinkError> {
        let port = reopen()?;
        Ok(Self {
            link: Link::new(port),
            reopen,
            plan,
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
        let (digest, hash) = expected(&self.plan.stage, &a.profile, &ts).ok_or_else(|| {
            BoardError::Refused(format!(
                "the instrument's own measuring inputs ({:?}) are not accepted",
                r.data
            ))
        })?;
        self.plan.push = push_lines(&self.plan.stage, &a.profile, &ts);
        self.plan.digest = digest;
        self.plan.hash = hash;
        if let Some(o) = self.plan.provenance.as_object_mut() {
            o.insert("settings".into(), crate::verdict::json::settings_json(&ts));
        }
        self.inputs_used = ts.inputs;
        Ok(())
    }

    /// The measuring inputs the station judges with (after [`Station::prepare`]).
    pub fn inputs(&self) -> Inputs {
        self.inputs_used
    }

    /// The instrument reports the expected settings digest.
    pub(super) fn digest_ok(&mut self) -> Result<bool, LinkError> {
        Ok(self.digest_reply()?.value("digest") == Some(self.plan.digest.as_str()))
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
        let id = self.link.sync(self.plan.budget).map_err(BoardError::Link)?;
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
        if first.value("digest") != Some(self.plan.digest.as_str()) {
            for l in self.plan.push.clone() {
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
        &self.plan.design_id
    }

    /// The design hash (stage and transistor) of what was pushed.
    pub fn hash(&self) -> u64 {
        self.plan.hash
    }

    /// The stage pushed (for the fault words on the screen).
    pub fn stage(&self) -> &Stage {
        &self.plan.stage
    }

    /// The settings digest verified on the instrument.
    pub fn digest(&self) -> &str {
        &self.plan.digest
    }

    /// A record with what judged it: `settings`, `digest` (verified on the instrument),
    /// `overrides`, and `design.digest` (the design file's).
    pub fn stamp(&self, mut record: Value) -> Value {
        if let (Some(o), Some(p)) = (record.as_object_mut(), self.plan.provenance.as_object()) {
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
            o.insert("digest".into(), json!(self.plan.digest));
        }
        record
    }
}
