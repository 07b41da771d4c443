//! The gain's spread at the test frequencies (`--ac-f`).

use super::*;

impl Cmd {
    /// The gain's spread at the `--ac-f` frequencies at the nominal supply: JSON
    /// `[{"f","nominal","worst_case": {"min","max"},"monte_carlo": {"runs","mean","std","min","max"}}]`
    /// and the text lines; `None` without `--ac-f`.
    pub(super) fn ac_spread(
        &self,
        r: &biasjig::stage_args::Resolved,
        var: &Variation,
    ) -> Result<Option<(Value, String)>, CliError> {
        use biasjig_core::signaltest;
        if self.ac_f.is_empty() {
            return Ok(None);
        }
        let bad = |e: signaltest::SignalTestError| CliError::usage(format!("--ac-f: {e}"));
        let vcc = r.stage.vcc.value;
        let wc = signaltest::windows(
            &r.stage,
            &r.profile,
            var,
            &signaltest::SignalMeter {
                gain_error: 0.0,
                floor: 0.0,
            },
            vcc,
            &self.ac_f,
        )
        .map_err(bad)?;
        let (mc, used) = signaltest::monte_carlo(
            &r.stage, &r.profile, var, vcc, &self.ac_f, self.runs, self.seed,
        )
        .map_err(bad)?;
        let mut text = String::from("Gain |v(load)/v(source)| at the test frequencies:\n");
        let mut list = Vec::new();
        for (w, m) in wc.iter().zip(mc.iter()) {
            list.push(json!({
                "f": json::num(w.f), "nominal": json::num(w.nominal),
                "worst_case": {"min": json::num(w.min), "max": json::num(w.max)},
                "monte_carlo": {"runs": used, "mean": json::num(m.mean), "std": json::num(m.std),
                                "min": json::num(m.min), "max": json::num(m.max)},
            }));
            text.push_str(&format!(
                "  {:>9}  nominal {:.3}   worst {:.3} to {:.3}   Monte Carlo mean {:.3}, std {:.3} ({used} runs)\n",
                biasjig::text::eng4(w.f, "Hz"),
                w.nominal,
                w.min,
                w.max,
                m.mean,
                m.std
            ));
        }
        Ok(Some((Value::Array(list), text)))
    }
}
