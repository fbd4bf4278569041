//! skidroute: screen planned routes for skid-steered ground vehicles on mixed terrain.
//!
//! Data flow (see README.md): `route` (read + project + plan geometry) -> `vehicle` (profile)
//! -> `kinematics` (model families, SE(2)) -> `follow` (controller) -> `effort` and `turn_limit`
//! (thrust, power, how tight it can turn) -> `rollout` (simulation)
//! -> `assess` (per-leg verdicts) -> `report` (table, JSON, CSV, GeoJSON, plots); beside them
//! `drift` (Monte Carlo of the position error when localization is lost); `recording` reads ROS 2
//! recordings (MCAP) as drive logs for `fit`.
//! Everything inside is SI, local frame x east, y north, yaw anticlockwise from x.

pub mod assess;
pub mod batch;
pub mod check;
pub mod compare;
pub mod csv_line;
pub mod decimal;
pub mod drift;
pub mod effort;
pub mod error;
pub mod fit;
pub mod follow;
pub mod kinematics;
pub mod limits;
pub mod margin;
pub mod progress;
pub mod recording;
pub mod relax;
pub mod report;
pub mod rollout;
pub mod route;
pub mod site;
pub mod turn_limit;
pub mod vehicle;

pub use error::Error;

/// The caution carried by every report and the README.
pub const CAUTION: &str = "Predictions come from a model calibrated on past drives; they are estimates, \
not guarantees. Trial new routes under supervision at reduced speed, keep people clear of the \
vehicle's path, and follow local regulations and site safety rules, which take precedence over this tool.";
