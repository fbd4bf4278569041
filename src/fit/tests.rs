//! Statistical and end-to-end tests of the fit pipeline.
