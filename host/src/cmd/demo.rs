//! `biasjig demo`: the whole job on the built-in demo scenario, a vibration-sensor preamplifier
//! for pump monitoring (invented figures): design, analysis, spread, test limits, then a
//! simulated production lot of 40 boards checked on the station, logged and reported, and one
//! failed board in detail.
//!
//! The demo runs the same commands a user would, with the same code paths, and writes its files
//! (design, readings, log, report) into one folder.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use rand_core::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::Global;
use biasjig::demo::{board, planted_fault, words, REQUIREMENT, TRANSISTOR};
use biasjig::designfile;
use biasjig::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK};

/// `biasjig demo`: no arguments needed.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Folder for the demo's files [default: biasjig-demo in the system's temporary folder]
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Boards in the simulated production lot
    #[arg(long, default_value_t = 40, value_parser = clap::value_parser!(u32).range(1..=10_000))]
    boards: u32,
    /// Seed of the simulated lot
    #[arg(long, default_value_t = 2026)]
    seed: u64,
}

fn heading(title: &str) {
    outln!();
    outln!(
        "━━ {title} {}",
        "━".repeat(70usize.saturating_sub(title.chars().count()))
    );
}

fn run(args: &[&str]) -> CmdResult {
    let mut full = vec!["biasjig"];
    full.extend_from_slice(args);
    outln!("$ {}", full.join(" "));
    crate::run_args(full)
}

fn path_str(p: &Path) -> String {
    p.to_string_lossy().into_owned()
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        if g.json {
            return Err(CliError::usage(
                "--json: the demo prints a report for a person; run its commands with --json instead",
            ));
        }
        let dir = self
            .out
            .clone()
            .unwrap_or_else(|| std::env::temp_dir().join("biasjig-demo"));
        std::fs::create_dir_all(&dir).map_err(|e| {
            CliError::usage(format!(
                "--out: {}: cannot create the folder: {e}",
                dir.display()
            ))
        })?;
        let design = dir.join("preamp.toml");
        let readings = dir.join("lot.csv");
        let log = dir.join("boards.jsonl");
        let html = dir.join("yield.html");
        // A fresh log for every demo run, so the report speaks of this lot only.
        if log.exists() {
            std::fs::remove_file(&log).map_err(|e| {
                CliError::usage(format!(
                    "--out: {}: cannot replace the log: {e}",
                    log.display()
                ))
            })?;
        }

        outln!("biasjig demo: a vibration-sensor preamp for pump monitoring (invented scenario)");
        outln!("12 V rail, 15 kΩ load, gain 15 from a 600 Ω source, low corner <= 5 Hz,");
        outln!("IC <= 2 mA, ambient -10 to +55 °C, E24 5 % resistors, E6 20 % capacitors;");
        outln!("an invented small-signal NPN profile: hFE 100 to 300, VBE 0.65 V at 1 mA.");
        outln!("Files go to {}.", dir.display());
        outln!(
            "Safety: de-energise boards before changing probes or parts; keep jig inputs within"
        );
        outln!("their rated range; no mains-connected circuits without isolation.");

        heading("1. Design: from the requirement to standard parts");
        let mut args: Vec<&str> = vec!["design"];
        args.extend(words(&REQUIREMENT));
        args.extend(words(&TRANSISTOR));
        let design_s = path_str(&design);
        // The demo's own folder: a second run replaces the first run's design file.
        args.extend_from_slice(&["--id", "pump-preamp-demo", "-o", &design_s, "--force"]);
        run(&args)?;

        heading("2. Spread: tolerance, hFE spread and ambient");
        run(&[
            "spread",
            "--design",
            &design_s,
            "--runs",
            "5000",
            "--seed",
            "7",
            "--temp-min",
            "-10",
            "--temp-max",
            "55",
        ])?;

        heading("3. Test limits for the station (0.5 % + 5 mV meter)");
        run(&["limits", "--design", &design_s, "--meter", "0.5"])?;

        heading("4. A production lot on the station");
        let doc = designfile::load(&design)?;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(self.seed);
        let mut csv = String::from("serial,vcc,vb,ve,vc\n");
        let mut first_failed = None;
        for i in 1..=self.boards {
            let fault = planted_fault(i, &doc.stage);
            if let Some(r) = board(&doc, &mut rng, fault) {
                let serial = format!("PM-{i:04}");
                let _ = writeln!(
                    csv,
                    "{serial},{:.4},{:.4},{:.4},{:.4}",
                    r.vcc, r.vb, r.ve, r.vc
                );
                if fault.is_some() && first_failed.is_none() {
                    first_failed = Some((serial, r));
                }
            }
        }
        std::fs::write(&readings, csv).map_err(|e| {
            CliError::usage(format!("--out: {}: cannot write: {e}", readings.display()))
        })?;
        outln!(
            "{} boards simulated within tolerance (3 of them with a planted fault), read with ±3 mV noise",
            self.boards
        );
        let readings_s = path_str(&readings);
        let log_s = path_str(&log);
        let lot = run(&["batch", "--design", &design_s, &readings_s, "--log", &log_s])?;

        heading("5. Yield report from the log");
        let html_s = path_str(&html);
        run(&["report", &log_s, "--html", &html_s])?;

        if let Some((serial, r)) = first_failed {
            heading("6. One failed board in detail");
            let (vcc, vb, ve, vc) = (
                format!("{:.4}", r.vcc),
                format!("{:.4}", r.vb),
                format!("{:.4}", r.ve),
                format!("{:.4}", r.vc),
            );
            let code = run(&[
                "check", "--design", &design_s, "--vcc", &vcc, "--vb", &vb, "--ve", &ve, "--vc",
                &vc, "--serial", &serial,
            ])?;
            if code != EXIT_FAIL {
                outln!("(the planted fault on {serial} was not caught)");
            }
        }
        heading("Done");
        outln!(
            "design {}, readings {}, log {}, report {}",
            design.display(),
            readings.display(),
            log.display(),
            html.display()
        );
        // The demo itself succeeded whether or not boards of the lot failed.
        let _ = lot;
        Ok(EXIT_OK)
    }
}
