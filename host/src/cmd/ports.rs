//! `biasjig ports`: list the serial ports this machine has.

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::json;

/// `biasjig ports`.
#[derive(clap::Args, Debug)]
pub struct Cmd {}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let ports = serialport::available_ports()
            .map_err(|e| CliError::link(format!("cannot list serial ports: {e}")))?;
        let kind = |t: &serialport::SerialPortType| match t {
            serialport::SerialPortType::UsbPort(_) => "usb",
            serialport::SerialPortType::PciPort => "pci",
            serialport::SerialPortType::BluetoothPort => "bluetooth",
            serialport::SerialPortType::Unknown => "unknown",
        };
        if g.json {
            let list: Vec<_> = ports
                .iter()
                .map(|p| serde_json::json!({"path": p.port_name, "kind": kind(&p.port_type)}))
                .collect();
            json::print(&serde_json::json!({ "ports": list }));
        } else if ports.is_empty() {
            eprintln!("no serial ports found");
        } else {
            for p in &ports {
                outln!("{}  ({})", p.port_name, kind(&p.port_type));
            }
        }
        Ok(EXIT_OK)
    }
}
