//! `leadline bench mains`: the adaptive mains canceller against the notch on the fixture.

use super::*;

/// The canceller and the notch on the mains fixture, and the standards' checks with each.
#[derive(Serialize)]
pub(super) struct MainsFigures {
    canceller: crate::analysis::hum::Judged,
    notch: crate::analysis::hum::Judged,
    /// QRS error of the notch over the canceller's.
    qrs_error_ratio: f64,
    /// ST shift of the canceller alone on the simulator's beat at 50 and 60 Hz, µV.
    st_shift_uv: [f64; 2],
    /// `conform`'s impulse test in the monitoring chain at 500 Hz with the notch and with the
    /// canceller instead: undershoot, µV.
    impulse_undershoot_notch_uv: f64,
    impulse_undershoot_canceller_uv: f64,
}

pub(super) fn mains(dir: &std::path::Path) -> Result<MainsFigures> {
    use crate::analysis::hum::{
        Fixture, canceller_only, judge, notch_only, run_live, st_shift_on_the_simulator,
    };
    let fx = Fixture::read(dir).map_err(crate::cli::BadInput)?;
    let canceller = judge(&fx, &run_live(canceller_only(), &fx.noisy));
    let notch = judge(&fx, &run_live(notch_only(), &fx.noisy));
    let with_notch = ChainSettings::default();
    let mut with_canceller = with_notch;
    with_canceller.notch.enabled = false;
    with_canceller.cancel.enabled = true;
    let undershoot = |s: ChainSettings| -> Result<f64> {
        let d = s.design(500.0)?;
        Ok(
            crate::conform::check(&d, crate::conform::Mode::Monitoring, false)?
                .impulse_undershoot_uv,
        )
    };
    Ok(MainsFigures {
        qrs_error_ratio: notch.qrs_error_rms_uv / canceller.qrs_error_rms_uv,
        canceller,
        notch,
        st_shift_uv: [
            st_shift_on_the_simulator(50.0),
            st_shift_on_the_simulator(60.0),
        ],
        impulse_undershoot_notch_uv: undershoot(with_notch)?,
        impulse_undershoot_canceller_uv: undershoot(with_canceller)?,
    })
}

impl MainsFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "mains fixture: 200 µV at 60 Hz drifting 59.7 → 60.3 Hz over 60 s, harmonics 2–5 at 10 %, ×3 at 30 s"
        );
        for (name, j) in [("canceller", &self.canceller), ("Q 30 notch", &self.notch)] {
            let per: Vec<String> = j
                .worst_residual_uv
                .iter()
                .zip(&j.worst_db_below)
                .enumerate()
                .map(|(h, (a, d))| format!("h{} {a:.2} µV ({d:.0} dB)", h + 1))
                .collect();
            println!("  {name:<11} worst residual after 2 s: {}", per.join(", "));
            println!(
                "  {name:<11} RMS error within ±100 ms of R: {:.1} µV",
                j.qrs_error_rms_uv
            );
        }
        println!(
            "  the notch changes the QRS {:.1}× as much as the canceller",
            self.qrs_error_ratio
        );
        println!(
            "  ST shift of the canceller on the simulator's beat: {:+.1} µV at 50 Hz, {:+.1} µV at 60 Hz",
            self.st_shift_uv[0], self.st_shift_uv[1]
        );
        println!(
            "  impulse test (monitoring chain, 500 Hz): undershoot {:.0} µV with the notch, {:.0} µV with the canceller",
            self.impulse_undershoot_notch_uv, self.impulse_undershoot_canceller_uv
        );
    }
}
