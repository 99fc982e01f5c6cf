//! The plan a cell is sized under: method (with its worst-case definition), stack order, drive,
//! reference inverter, mobility ratio, load, diffusion capacitance, process, name and work budget.
//!
//! A plan is built and checked once, where the user's values come in (the command line, a library
//! gate); options that cannot go together cannot be built together: the worst-case definition is
//! part of the methods that use one, and a critical input is part of the orders that honour one.

use std::sync::Arc;

use crate::bounds;
use crate::budget::DEFAULT_WORK_BUDGET;
use crate::network::NetworkKind;
use crate::process::Process;

/// A method's name, as the command line and library files give it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum MethodName {
    /// Each device: reference W/L x the number of devices on the longest path through it.
    LongestPath,
    /// Least total W/L with every path at most the target (exact closed form).
    MinArea,
    /// Least total W/L with every worst-case Elmore delay at most the reference inverter's driving the
    /// same load (a geometric program).
    Elmore,
}

/// What "the worst case" of a network is, for the methods that size against one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, serde::Serialize, serde::Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum WorstCase {
    /// Every conducting path of the network, each as if it conducted alone (docs/model.md section 4).
    #[default]
    Paths,
    /// Every input vector under which the network conducts, with everything it turns on
    /// (docs/model.md section 10): below the path bound where inputs repeat.
    Vectors,
}

impl WorstCase {
    /// `"paths"` or `"vectors"`.
    pub fn name(self) -> &'static str {
        match self {
            WorstCase::Paths => "paths",
            WorstCase::Vectors => "vectors",
        }
    }

    /// The other definition.
    pub fn other(self) -> WorstCase {
        match self {
            WorstCase::Paths => WorstCase::Vectors,
            WorstCase::Vectors => WorstCase::Paths,
        }
    }
}

/// A worst-case definition that a method does not take, refused where the user's values come in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum WorstCaseRefused {
    /// Longest-path with the worst case over vectors.
    #[error(
        "the worst case over input vectors does not apply to longest-path: longest-path is a rule, not an \
         optimum (each device gets the reference W/L times the devices on the longest path through it); size \
         by min-area to size against every input vector"
    )]
    LongestPath,
}

/// How widths are chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Method {
    /// Each device: reference W/L x the number of devices on the longest path through it.
    LongestPath,
    /// Least total W/L with every worst case at most the target (exact closed form over paths).
    MinArea {
        /// What the worst case is.
        worst_case: WorstCase,
    },
    /// Least total W/L with every worst-case Elmore delay at most the reference inverter's driving the
    /// same load (a geometric program, solved by the elmore strategy, `sizing/elmore.rs`).
    Elmore {
        /// Which transitions its constraints start from.
        worst_case: WorstCase,
    },
}

impl Method {
    /// Min-area against every path.
    pub const MIN_AREA: Method = Method::MinArea { worst_case: WorstCase::Paths };
    /// The elmore method, its constraints from every path.
    pub const ELMORE: Method = Method::Elmore { worst_case: WorstCase::Paths };

    /// Every method, default first, each with the default worst case.
    pub const ALL: [Method; 3] = [
        Method::LongestPath,
        Method::MinArea { worst_case: WorstCase::Paths },
        Method::Elmore { worst_case: WorstCase::Paths },
    ];

    /// The method a name gives with the worst case `worst_case`: refused for longest-path (a rule,
    /// not an optimum).
    pub fn with(name: MethodName, worst_case: WorstCase) -> Result<Method, WorstCaseRefused> {
        match (name, worst_case) {
            (_, WorstCase::Paths) => Ok(Method::of(name)),
            (MethodName::MinArea, worst_case) => Ok(Method::MinArea { worst_case }),
            (MethodName::Elmore, worst_case) => Ok(Method::Elmore { worst_case }),
            (MethodName::LongestPath, WorstCase::Vectors) => Err(WorstCaseRefused::LongestPath),
        }
    }

    /// What the method takes as the worst case (longest-path, a rule over paths: paths).
    pub fn worst_case(self) -> WorstCase {
        match self {
            Method::LongestPath => WorstCase::Paths,
            Method::MinArea { worst_case } | Method::Elmore { worst_case } => worst_case,
        }
    }

    /// The method a name gives, with the default worst case.
    pub fn of(name: MethodName) -> Method {
        match name {
            MethodName::LongestPath => Method::LongestPath,
            MethodName::MinArea => Method::MinArea { worst_case: WorstCase::Paths },
            MethodName::Elmore => Method::Elmore { worst_case: WorstCase::Paths },
        }
    }

    /// Its name.
    pub fn named(self) -> MethodName {
        match self {
            Method::LongestPath => MethodName::LongestPath,
            Method::MinArea { .. } => MethodName::MinArea,
            Method::Elmore { .. } => MethodName::Elmore,
        }
    }

    /// `"longest-path"`, `"min-area"` or `"elmore"`.
    pub fn name(self) -> &'static str {
        match self {
            Method::LongestPath => "longest-path",
            Method::MinArea { .. } => "min-area",
            Method::Elmore { .. } => "elmore",
        }
    }

    /// The path-constrained method to compare with: longest-path and min-area each other; the elmore
    /// method min-area, the least area that meets the path constraint alone.
    pub fn other(self) -> Method {
        match self {
            Method::LongestPath | Method::Elmore { .. } => Method::of(MethodName::MinArea),
            Method::MinArea { .. } => Method::LongestPath,
        }
    }

    /// Whether widths come from delays (the elmore method), so the load sizes the cell.
    pub fn sizes_by_delay(self) -> bool {
        matches!(self, Method::Elmore { .. })
    }
}

impl serde::Serialize for Method {
    /// As its name: `"min-area"`.
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(self.name())
    }
}

/// A series-stack order as the command line and library files name it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum StackOrder {
    /// The default order: the critical input, then the least diffusion width, nearest the output.
    #[default]
    Default,
    /// Series members as the expression writes them, the first nearest the output.
    Written,
    /// Search the orders for the least worst Elmore delay (the elmore method: the least total W/L).
    Search,
}

/// Which member of each series stack touches the output.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Order {
    /// Members holding the critical input first, then the least diffusion width facing the output;
    /// ties keep the written order.
    Default {
        /// The input to place nearest the output, if any.
        critical: Option<String>,
    },
    /// As the expression writes them, the first nearest the output (no critical input: the text
    /// chooses).
    Written,
    /// The order with the least worst Elmore delay (or the least worst delay of the critical input;
    /// with the elmore method, the least total W/L), found by timing candidate orders.
    Search {
        /// The input whose delay the search minimises, if any.
        critical: Option<String>,
    },
}

impl Order {
    /// The order `order` names, with a critical input: refused with the written order, where the text
    /// already chooses.
    pub fn new(order: StackOrder, critical: Option<String>) -> Result<Order, CriticalWithWrittenOrder> {
        match (order, critical) {
            (StackOrder::Default, critical) => Ok(Order::Default { critical }),
            (StackOrder::Search, critical) => Ok(Order::Search { critical }),
            (StackOrder::Written, None) => Ok(Order::Written),
            (StackOrder::Written, Some(critical)) => Err(CriticalWithWrittenOrder { critical }),
        }
    }

    /// The critical input, where the order has one.
    pub fn critical(&self) -> Option<&str> {
        match self {
            Order::Default { critical } | Order::Search { critical } => critical.as_deref(),
            Order::Written => None,
        }
    }

    /// The order's name.
    pub fn named(&self) -> StackOrder {
        match self {
            Order::Default { .. } => StackOrder::Default,
            Order::Written => StackOrder::Written,
            Order::Search { .. } => StackOrder::Search,
        }
    }
}

/// A critical input given with the written stack order, which already chooses the order.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "--critical {critical} and the written stack order both choose the order: write '{critical}' first in its \
     stacks, or drop one of them"
)]
pub struct CriticalWithWrittenOrder {
    /// The critical input.
    pub critical: String,
}

/// The reference inverter: NMOS and PMOS W/L at drive 1. Drive scales both.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Reference {
    /// NMOS W/L at drive 1.
    pub nmos: f64,
    /// PMOS W/L at drive 1.
    pub pmos: f64,
}

impl Reference {
    /// The balanced reference: NMOS 1, PMOS `mu`, both pulling with resistance R.
    pub fn balanced(mobility_ratio: f64) -> Reference {
        Reference { nmos: 1.0, pmos: mobility_ratio }
    }

    /// Gate capacitance of the unit (drive 1) reference, `C_inv`, in units of the unit NMOS's.
    pub fn input_capacitance(&self) -> f64 {
        self.nmos + self.pmos
    }
}

/// The load on a cell's output: one type for timing, the elmore method and the deck.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Load {
    /// H copies of the timed input's capacitance of the cell itself (the textbook fan-out h).
    Fanout(f64),
    /// A fixed capacitance in units of C, the gate capacitance of the unit transistor.
    Units(f64),
    /// A fixed capacitance in fF, turned into units of C by the process's gate capacitance.
    Femtofarads(f64),
}

impl Load {
    /// The value as given and what it is, for messages.
    pub fn named(self) -> (&'static str, f64) {
        match self {
            Load::Fanout(h) => ("the fan-out", h),
            Load::Units(c) => ("the load", c),
            Load::Femtofarads(ff) => ("the load in fF", ff),
        }
    }
}

/// What timing assumes: the load on the output and the diffusion capacitance per unit W/L and
/// terminal, over the gate capacitance per unit W/L.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conditions {
    /// The load.
    pub load: Load,
    /// The diffusion ratio.
    pub diffusion_ratio: f64,
}

impl Default for Conditions {
    /// Fan-out 1, diffusion ratio 1 (as in the published worked examples).
    fn default() -> Conditions {
        Conditions { load: Load::Fanout(1.0), diffusion_ratio: 1.0 }
    }
}

impl Conditions {
    /// The load and the diffusion ratio within [`bounds::LOAD`].
    pub fn check(&self) -> Result<(), bounds::OutOfBounds> {
        let (what, value) = self.load.named();
        for (what, value) in [("the diffusion ratio", self.diffusion_ratio), (what, value)] {
            bounds::LOAD.check_named(what, value)?;
        }
        Ok(())
    }
}

/// The diffusion ratio when none is given: with a process file, its diffusion capacitance over its
/// gate capacitance per um of width (`diffusion_cap_ff_per_um / gate_cap_ff_per_um`), so that the
/// delays see the capacitors of that process's simulation deck; without one, 1, as in the published
/// worked examples (the built-in process is not used for it). `None` where the file's gate
/// capacitance is 0.
pub fn default_diffusion_ratio(process_file: Option<&Process>) -> Option<f64> {
    let Some(process) = process_file else { return Some(1.0) };
    let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
    ratio.is_finite().then_some(ratio)
}

/// Everything sizing needs to know about one cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// How widths are chosen.
    pub method: Method,
    /// Which member of each series stack touches the output.
    pub order: Order,
    /// Drive strength: multiple of the unit reference inverter.
    pub drive: f64,
    /// The unit reference inverter (balanced unless skewed on purpose).
    pub reference: Reference,
    /// Mobility ratio mu_n / mu_p.
    pub mobility_ratio: f64,
    /// The load and diffusion capacitance the cell is timed against (and the elmore method sizes
    /// against).
    pub conditions: Conditions,
    /// The process that turns relative sizes into drawn widths.
    pub process: Arc<Process>,
    /// The cell name, used as given (default: the shorthand, or `cell`, with the drive: `nand2_x1`).
    pub name: Option<String>,
    /// The work budget of each long computation of the sizing and timing ([`crate::budget`]).
    pub budget: u64,
    /// The effort each stage before the output stage of a cell of several stages bears driving
    /// what it drives (docs/model.md section 9): its drive is its load over this times the unit
    /// reference inverter's input capacitance.
    pub stage_effort: f64,
    /// The elmore method's delay target: the worst Elmore delay over the reference inverter's at the
    /// same load; `None` is the ratio the longest-path rule reaches (docs/model.md section 12).
    pub delay_target: Option<f64>,
}

/// The stage effort when none is given: 4, the usual design value (common practice, no source).
pub const DEFAULT_STAGE_EFFORT: f64 = 4.0;

impl Plan {
    /// A plan with the given method, mobility ratio, drive and reference (balanced when `None`), in
    /// the default order with no critical input, fan-out 1 and diffusion ratio 1, the built-in
    /// process, the default name and work budget.
    pub fn new(method: Method, mobility_ratio: f64, drive: f64, reference: Option<Reference>) -> Plan {
        Plan {
            method,
            order: Order::Default { critical: None },
            drive,
            reference: reference.unwrap_or_else(|| Reference::balanced(mobility_ratio)),
            mobility_ratio,
            conditions: Conditions::default(),
            process: Arc::new(Process::default()),
            name: None,
            budget: DEFAULT_WORK_BUDGET,
            stage_effort: DEFAULT_STAGE_EFFORT,
            delay_target: None,
        }
    }

    /// The reference W/L of a device in `kind`'s network, at this drive.
    pub fn reference_width(&self, kind: NetworkKind) -> f64 {
        self.drive
            * match kind {
                NetworkKind::PullDown => self.reference.nmos,
                NetworkKind::PullUp => self.reference.pmos,
            }
    }

    /// Resistance of one device of W/L 1 in `kind`'s network, in units of R.
    pub fn unit_resistance(&self, kind: NetworkKind) -> f64 {
        match kind {
            NetworkKind::PullDown => 1.0,
            NetworkKind::PullUp => self.mobility_ratio,
        }
    }

    /// The network's target: the reference inverter's resistance on that side, in units of R.
    pub fn target(&self, kind: NetworkKind) -> f64 {
        self.unit_resistance(kind) / self.reference_width(kind)
    }

    /// Resistances of devices of the given widths in `kind`'s network.
    pub fn resistances(&self, kind: NetworkKind, widths: &[f64]) -> Vec<f64> {
        let unit = self.unit_resistance(kind);
        widths.iter().map(|w| unit / w).collect()
    }

    /// The reference inverter's input capacitance at this drive, in C: what logical effort and
    /// parasitic delay divide by.
    pub fn reference_capacitance(&self) -> f64 {
        self.drive * self.reference.input_capacitance()
    }

    /// The drive, mobility ratio and reference W/L within [`bounds::SIZING`].
    pub fn check(&self) -> Result<(), bounds::OutOfBounds> {
        for (what, value) in [
            ("the drive", self.drive),
            ("the mobility ratio", self.mobility_ratio),
            ("the reference NMOS W/L", self.reference.nmos),
            ("the reference PMOS W/L", self.reference.pmos),
            ("the stage effort", self.stage_effort),
        ] {
            bounds::SIZING.check_named(what, value)?;
        }
        if let Some(ratio) = self.delay_target {
            bounds::SIZING.check_named("the delay target", ratio)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn skewed_reference_sets_each_side_its_own_target() {
        let plan = Plan::new(Method::LongestPath, 2.0, 2.0, Some(Reference { nmos: 1.0, pmos: 3.0 }));
        assert_relative_eq!(plan.target(NetworkKind::PullDown), 0.5);
        assert_relative_eq!(plan.target(NetworkKind::PullUp), 2.0 / 6.0);
    }

    #[test]
    fn a_critical_input_with_the_written_order_cannot_be_built() {
        let error = Order::new(StackOrder::Written, Some("a".into())).unwrap_err();
        assert!(error.to_string().starts_with("--critical a and the written stack order"), "{error}");
        assert_eq!(Order::new(StackOrder::Search, Some("a".into())).unwrap().critical(), Some("a"));
        assert_eq!(Order::new(StackOrder::Written, None), Ok(Order::Written));
    }

    #[test]
    fn methods_go_by_their_names() {
        for method in Method::ALL {
            assert_eq!(Method::of(method.named()), method);
        }
        assert_eq!(serde_json::to_string(&Method::of(MethodName::MinArea)).unwrap(), "\"min-area\"");
    }

    #[test]
    fn only_min_area_takes_the_worst_case_over_vectors() {
        let vectors = Method::with(MethodName::MinArea, WorstCase::Vectors).unwrap();
        assert_eq!((vectors.name(), vectors.worst_case()), ("min-area", WorstCase::Vectors));
        assert_eq!(Method::with(MethodName::LongestPath, WorstCase::Vectors), Err(WorstCaseRefused::LongestPath));
        assert!(WorstCaseRefused::LongestPath.to_string().contains("a rule, not an optimum"));
        let elmore = Method::with(MethodName::Elmore, WorstCase::Vectors).unwrap();
        assert_eq!((elmore.name(), elmore.worst_case()), ("elmore", WorstCase::Vectors));
        for name in [MethodName::LongestPath, MethodName::MinArea, MethodName::Elmore] {
            assert_eq!(Method::with(name, WorstCase::Paths), Ok(Method::of(name)));
        }
    }
}
