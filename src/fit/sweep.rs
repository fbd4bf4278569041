//! The horizon sweep (docs/method.md, Calibration): the chosen family is trained at each horizon of the sweep and
//! evaluated on the held-out windows of every horizon, giving a train x evaluate table of median
//! relative translation error per terrain. Models trained on short windows tend to predict short
//! horizons best and long-window models long horizons, so the table shows which training horizon
//! suits which use (a path follower's look-ahead versus dead reckoning through an outage).

use serde::Serialize;

use super::lm::fit_weighted;
use super::params::Parametrisation;
use super::validate::{summarise, window_errors};
use super::windows::{cut_windows, Series};

/// Median relative translation error for each training horizon (rows) and evaluation horizon
/// (columns); `None` where there were no windows or the fit did not converge.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepTable {
    pub family: String,
    pub horizons_s: Vec<f64>,
    /// `error_rel[train][evaluate]`, a fraction.
    pub error_rel: Vec<Vec<Option<f64>>>,
    /// Training windows at each horizon.
    pub training_windows: Vec<usize>,
}

/// Runs the sweep for `par` on `s`, starting each fit from `start`.
pub fn sweep(par: &Parametrisation, s: &Series, start: &[f64], horizons_s: &[f64], yaw_scale: f64) -> SweepTable {
    let cuts: Vec<_> = horizons_s.iter().map(|h| cut_windows(s, *h)).collect();
    let mut error_rel = Vec::new();
    let mut training_windows = Vec::new();
    for (train, _) in &cuts {
        training_windows.push(train.len());
        let est = (!train.is_empty()).then(|| fit_weighted(par, s, train, yaw_scale, start));
        let row = cuts
            .iter()
            .map(|(_, val)| {
                let est = est.as_ref().filter(|e| e.converged)?;
                summarise(&window_errors(par, &est.params, s, val)).translation_rel.map(|t| t.median)
            })
            .collect();
        error_rel.push(row);
    }
    SweepTable { family: par.family.name().to_string(), horizons_s: horizons_s.to_vec(), error_rel, training_windows }
}
