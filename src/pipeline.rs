//! Runs the whole pipeline for one target.
