//! Crate-level error: wraps each module's error so the binary can map all of them to exit code 2.

use thiserror::Error;

/// Any error the library returns. Every variant is an input, usage or I/O problem (exit code 2).
#[derive(Debug, Error)]
pub enum Error {
    #[error(transparent)]
    Route(#[from] crate::route::RouteError),
    #[error(transparent)]
    Vehicle(#[from] crate::vehicle::VehicleError),
    #[error(transparent)]
    Fit(#[from] crate::fit::FitError),
    #[error(transparent)]
    Recording(#[from] crate::recording::RecordingError),
    #[error(transparent)]
    Report(#[from] crate::report::ReportError),
    #[error(transparent)]
    Compare(#[from] crate::compare::CompareError),
    #[error(transparent)]
    Relax(#[from] crate::relax::RelaxError),
    #[error(transparent)]
    Drift(#[from] crate::drift::DriftError),
    #[error(transparent)]
    Site(#[from] crate::site::SiteError),
}
