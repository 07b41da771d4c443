//! The four jig nodes, a jig read through ADC channels, and the emulated jig.
use crate::adc::{ChannelConfig, ChannelError};

/// A node of the board under test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Node {
    /// Supply.
    Vcc,
    /// Base.
    Vb,
    /// Emitter.
    Ve,
    /// Collector.
    Vc,
}

impl Node {
    /// All nodes, in jig channel order.
    pub const ALL: [Node; 4] = [Node::Vcc, Node::Vb, Node::Ve, Node::Vc];

    /// Name as printed: `VCC`, `VB`, `VE`, `VC`.
    pub fn name(self) -> &'static str {
        match self {
            Node::Vcc => "VCC",
            Node::Vb => "VB",
            Node::Ve => "VE",
            Node::Vc => "VC",
        }
    }

    /// Jig channel index (0..4).
    pub fn index(self) -> usize {
        self as usize
    }
}

/// Measured node voltages, volts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NodeVoltages {
    /// Supply.
    pub vcc: f32,
    /// Base.
    pub vb: f32,
    /// Emitter.
    pub ve: f32,
    /// Collector.
    pub vc: f32,
}

impl NodeVoltages {
    /// Voltage of one node.
    pub fn get(&self, node: Node) -> f32 {
        match node {
            Node::Vcc => self.vcc,
            Node::Vb => self.vb,
            Node::Ve => self.ve,
            Node::Vc => self.vc,
        }
    }

    fn set(&mut self, node: Node, v: f32) {
        match node {
            Node::Vcc => self.vcc = v,
            Node::Vb => self.vb = v,
            Node::Ve => self.ve = v,
            Node::Vc => self.vc = v,
        }
    }
}

/// A refused measurement: which node and why.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct JigError {
    /// The node that could not be read.
    pub node: Node,
    /// Why.
    pub error: ChannelError,
}

impl core::fmt::Display for JigError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{}: {}", self.node.name(), self.error)
    }
}

/// Raw ADC samples of the jig's channels.
pub trait SampleSource {
    /// One conversion of a node's channel.
    fn sample(&mut self, node: Node) -> u16;
}

/// Most samples in one burst.
pub const MAX_OVERSAMPLE: usize = 64;

/// A jig read through four ADC channels with oversampling.
pub struct SampledJig<S> {
    /// Where the samples come from.
    pub source: S,
    /// Channel configuration per node, in [`Node::ALL`] order.
    pub channels: [ChannelConfig; 4],
    /// Samples per reading (1..=[`MAX_OVERSAMPLE`]).
    pub oversample: usize,
}

impl<S: SampleSource> SampledJig<S> {
    /// Measures all four nodes; the first refused node stops the measurement.
    pub fn measure(&mut self) -> Result<NodeVoltages, JigError> {
        let mut v = NodeVoltages {
            vcc: 0.0,
            vb: 0.0,
            ve: 0.0,
            vc: 0.0,
        };
        let n = self.oversample.clamp(1, MAX_OVERSAMPLE);
        for (node, ch) in Node::ALL.into_iter().zip(self.channels.iter()) {
            let mut buf = [0u16; MAX_OVERSAMPLE];
            let burst = buf.get_mut(..n).unwrap_or(&mut []);
            for s in burst.iter_mut() {
                *s = self.source.sample(node);
            }
            let r = ch
                .convert(burst)
                .map_err(|error| JigError { node, error })?;
            v.set(node, r.volts);
        }
        Ok(v)
    }
}

/// The emulated jig's node voltages: a healthy stage on a 12 V supply.
pub const EMULATED_NODES: NodeVoltages = NodeVoltages {
    vcc: 12.0,
    vb: 2.10,
    ve: 1.45,
    vc: 6.80,
};

/// Divider ratio of the jig inputs (47 kΩ over 10 kΩ): 0..18.8 V on a 3.3 V converter.
pub const JIG_DIVIDER_RATIO: f32 = 5.7;
/// ADC reference of the jig, volts.
pub const JIG_VREF: f32 = 3.3;

/// Samples of a simulated board under test: each node's voltage turned into the code an ideal
/// channel reads, plus a few codes of deterministic noise. A node set to `f32::NAN` is an open
/// probe (codes all over the range).
pub struct EmulatedSamples {
    /// Simulated node voltages.
    pub nodes: NodeVoltages,
    /// Channel model used to turn volts into codes.
    pub channel: ChannelConfig,
    state: u32,
}

impl EmulatedSamples {
    /// Simulated samples of the given nodes.
    pub fn new(nodes: NodeVoltages) -> Self {
        EmulatedSamples {
            nodes,
            channel: ChannelConfig::new(JIG_DIVIDER_RATIO, JIG_VREF),
            state: 0x1234_5678,
        }
    }

    fn next(&mut self) -> u32 {
        // xorshift32: cheap, deterministic, no dependency.
        let mut x = self.state;
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        self.state = x;
        x
    }
}

impl SampleSource for EmulatedSamples {
    fn sample(&mut self, node: Node) -> u16 {
        let v = self.nodes.get(node);
        let r = self.next();
        if v.is_nan() {
            return (r % 4096) as u16;
        }
        let code = i32::from(self.channel.code_for(v)) + (r % 5) as i32 - 2;
        code.clamp(0, i32::from(self.channel.full_scale)) as u16
    }
}

/// The emulated jig: simulated samples through the same channel math as the hardware.
pub struct EmulatedJig {
    jig: SampledJig<EmulatedSamples>,
}

impl EmulatedJig {
    /// An emulated jig showing the given node voltages.
    pub fn new(nodes: NodeVoltages) -> Self {
        let channel = ChannelConfig::new(JIG_DIVIDER_RATIO, JIG_VREF);
        EmulatedJig {
            jig: SampledJig {
                source: EmulatedSamples::new(nodes),
                channels: [channel; 4],
                oversample: 16,
            },
        }
    }

    /// Changes the simulated node voltages.
    pub fn set_nodes(&mut self, nodes: NodeVoltages) {
        self.jig.source.nodes = nodes;
    }

    /// Measures all four nodes.
    pub fn measure(&mut self) -> Result<NodeVoltages, JigError> {
        self.jig.measure()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn emulated_jig_reads_back_its_nodes() {
        let mut jig = EmulatedJig::new(EMULATED_NODES);
        let v = jig.measure().unwrap();
        for node in Node::ALL {
            let err = (v.get(node) - EMULATED_NODES.get(node)).abs();
            assert!(err < 0.01, "{} off by {err}", node.name());
        }
        assert_eq!(Node::Vc.index(), 3);
        assert_eq!(Node::Vcc.name(), "VCC");
    }

    #[test]
    fn emulated_open_probe_and_over_range() {
        let mut jig = EmulatedJig::new(NodeVoltages {
            ve: f32::NAN,
            ..EMULATED_NODES
        });
        let e = jig.measure().unwrap_err();
        assert_eq!(e.node, Node::Ve);
        assert!(matches!(e.error, ChannelError::OpenProbe { .. }));
        jig.set_nodes(NodeVoltages {
            vcc: 30.0,
            ..EMULATED_NODES
        });
        let e = jig.measure().unwrap_err();
        assert_eq!((e.node, e.error), (Node::Vcc, ChannelError::OverRange));
        assert_eq!(format!("{e}"), "VCC: over range");
    }
}
