pub mod util;

mod calc_cli;
mod check_broken;
mod determinism;
mod report_pdf;
