//! One module per subcommand, each a `Cmd` with `run()`.

pub mod analyze;
pub mod batch;
pub mod check;
pub mod console;
pub mod demo;
pub mod design;
pub mod import;
pub mod limits;
pub mod ports;
pub mod repair;
pub mod report;
pub mod spread;
pub mod station;
