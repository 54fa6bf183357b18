pub mod util;

mod cad_plans;
mod calc_cli;
mod check_broken;
mod check_limits;
mod check_parity;
mod conventions;
mod determinism;
mod external;
mod figures;
mod maps;
mod portfolio;
mod report_pdf;
mod verdict;
