//! CLI integration tests: one test binary (modules under `tests/cli/`), each test in its own
//! temporary folder.

mod cli;
