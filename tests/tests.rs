//! CLI integration tests: one test binary, each test in its own temporary folder.

mod util;

mod check_broken;
mod determinism;
mod report_pdf;
mod calc_cli;
