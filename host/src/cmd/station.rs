//! `biasjig station`: the technician's loop (the library's [`biasjig::station`]) on the
//! instrument over a serial port, or with `--manual` on the console engine in this process with
//! the readings typed from a meter. The flags give the design file, the log and store, and the
//! test settings pushed with the design.

use std::path::PathBuf;

use biasjig_core::device::Profile;
use biasjig_core::settings::TestSettings;

use crate::Global;
use biasjig::board::StationSink;
use biasjig::designfile;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::link::{sync_budget, LinkError, MemoryPort, Port, SerialLink};
use biasjig::stage_args::{station_settings, SettingsArgs};
use biasjig::station::{provenance, run_loop, serve, Plan, Station};
use biasjig::store::TraceArgs;
use biasjig::values;

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
    #[arg(long = "sync-timeout", default_value_t = biasjig::link::SYNC_TIMEOUT.as_secs_f64(), value_name = "S")]
    pub sync_timeout: f64,
    /// Test ambient, °C (the station's, not the design's operating range) [default: the design
    /// file's test ambient, or 25]
    #[arg(long, value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Test ambient")]
    pub temp: Option<f64>,
    #[command(flatten)]
    pub settings: SettingsArgs,
    /// Also keep the pushed design on the instrument under NAME (its `keep NAME`), so that the
    /// unit starts on it and can choose it again with no PC
    #[arg(long, value_name = "NAME")]
    pub keep: Option<String>,
    #[command(flatten)]
    pub trace: TraceArgs,
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
        let (settings, overrides) = station_settings(doc.test, self.temp, &self.settings)?;
        let prov = provenance(&settings, overrides, &doc.digest);
        let plan = Plan::new(
            doc.stage,
            &doc.profile,
            &settings,
            prov,
            doc.id.clone(),
            budget,
        )
        .ok_or_else(|| {
            CliError::field(
                "--design",
                self.design.display(),
                "a stage the console accepts",
            )
        })?;
        // Inputs stated by neither the design file nor a flag: the instrument's own.
        let adopt = doc.test.inputs.r.is_none() && self.settings.inputs.input_r.is_none();
        let mode_stated = self.settings.inputs.inputs.is_some();
        let unit_inputs = adopt.then_some((doc.profile, settings, mode_stated));
        let stdin = std::io::stdin();
        let mut out = std::io::stderr();
        let boards = if self.manual {
            let (host, unit) = MemoryPort::pair();
            std::thread::spawn(move || serve(unit));
            let mut host = Some(host);
            let reopen = move || {
                host.take()
                    .ok_or(LinkError::Disconnected("in-process console".into()))
            };
            let mut st = configured(Station::new(reopen, plan)?, unit_inputs, &self.keep);
            st.prepare()?;
            let mut sink = StationSink::open(Some(&self.log), &self.trace)?;
            run_loop(&mut st, stdin.lock(), &mut out, &mut sink, true)?
        } else {
            let path = self.port.clone().unwrap_or_default();
            let baud = self.baud;
            let reopen = || SerialLink::open(&path, baud);
            let mut st = configured(Station::new(reopen, plan)?, unit_inputs, &self.keep);
            let id = st.prepare()?;
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

/// The station with the command's options: the instrument's own measuring inputs when none were
/// stated (`unit_inputs`: the transistor, the test settings and whether `--inputs` was given),
/// and `--keep`.
fn configured<P: Port, F: FnMut() -> Result<P, LinkError>>(
    st: Station<P, F>,
    unit_inputs: Option<(Profile, TestSettings, bool)>,
    keep: &Option<String>,
) -> Station<P, F> {
    let st = match unit_inputs {
        Some((profile, settings, mode_stated)) => {
            st.inputs_from_unit(profile, settings, mode_stated)
        }
        None => st,
    };
    st.keep_as(keep.clone())
}
