//! What timing reports: the delay of every input on both output edges, what the delays assume and
//! the logical-effort view; and beside it, for the `size` command's report, the methods side by side
//! and the stack-order search's result. Plain data (the JSON output's delay keys).

use crate::cell::StackOrderReport;
use crate::network::NetworkKind;
use crate::paths::Vector;
use crate::sizing::plan::Method;

/// An output edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Edge {
    /// The output falls: the pull-down conducts.
    Fall,
    /// The output rises: the pull-up conducts.
    Rise,
}

impl Edge {
    /// Both edges, fall first (pull-down first, like the networks).
    pub const BOTH: [Edge; 2] = [Edge::Fall, Edge::Rise];

    /// `"fall"` or `"rise"`.
    pub fn name(self) -> &'static str {
        match self {
            Edge::Fall => "fall",
            Edge::Rise => "rise",
        }
    }

    /// The network that pulls the output to the new level.
    pub fn network(self) -> NetworkKind {
        match self {
            Edge::Fall => NetworkKind::PullDown,
            Edge::Rise => NetworkKind::PullUp,
        }
    }
}

/// The process values that turn RC into picoseconds.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ProcessUnits {
    /// The process's label.
    pub process: String,
    /// R: effective on-resistance of the unit NMOS, ohm.
    pub unit_resistance_ohm: f64,
    /// C: gate capacitance of the unit transistor (gate capacitance per um x unit width), fF.
    pub unit_capacitance_ff: f64,
    /// R x C, ps.
    pub rc_ps: f64,
    /// How R is defined.
    pub resistance_formula: &'static str,
}

/// How R is defined, as reported.
pub const RESISTANCE_FORMULA: &str = "R = t50 / (C ln 2), where t50 is the level-1 (Shichman-Hodges) time for the unit \
NMOS to discharge C from VDD to VDD/2 after a full step on its gate: t50 = C / (b Vov) (2 Vt / Vov + ln((4 Vov - VDD) / \
VDD)) with b = KP W/L and Vov = VDD - Vt (saturation to VDD - Vt, then linear; t50 = C VDD / (b Vov^2) when Vt >= VDD/2)";

/// What the delays assume.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DelayModel {
    /// Diffusion capacitance over gate capacitance, per unit W/L and terminal.
    pub diffusion_ratio: f64,
    /// H, when the load is H times the timed input's own capacitance.
    pub fanout: Option<f64>,
    /// The load in units of C, when given as a capacitance.
    pub load_c: Option<f64>,
    /// The load in fF, when given so (`--load-ff`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub load_ff: Option<f64>,
    /// The logical-effort time unit for falling edges: the unit reference inverter's pull-down
    /// resistance x its input capacitance, in RC.
    pub tau_fall_rc: f64,
    /// The same for rising edges, with the pull-up resistance.
    pub tau_rise_rc: f64,
    /// R, C and RC of the process, when one is given.
    pub process: Option<ProcessUnits>,
}

/// The logical-effort view of one transition: d = g h + p in units of tau, with p in both published
/// conventions.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct EffortView {
    /// Logical effort g of the input.
    pub g: f64,
    /// Electrical effort h: the load over the input's capacitance.
    pub h: f64,
    /// Parasitic delay from the output node's diffusion alone (x the diffusion ratio), over the
    /// unit reference inverter's input capacitance.
    pub p_output_node: f64,
    /// Parasitic delay from the Elmore delay with no load, over tau: internal nodes included.
    pub p_elmore: f64,
    /// g h + p_output_node.
    pub d_output_node: f64,
    /// g h + p_elmore.
    pub d_elmore: f64,
}

/// One input, one edge.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Delay {
    /// The input that switches.
    pub input: String,
    /// `"rise"` or `"fall"`: the output edge.
    pub edge: Edge,
    /// Elmore delay in units of RC.
    pub elmore_rc: f64,
    /// The Elmore delay (the first moment of the step response, a time constant) in picoseconds,
    /// with a process.
    pub elmore_ps: Option<f64>,
    /// A single-pole estimate of the 50% delay, ln 2 x the Elmore delay, in picoseconds, with a
    /// process.
    pub t50_estimate_ps: Option<f64>,
    /// The load, in units of C.
    pub load_c: f64,
    /// The reference inverter's Elmore delay driving the same load, RC: the bound of the elmore method.
    pub reference_elmore_rc: f64,
    /// `elmore_rc / reference_elmore_rc`.
    pub delay_ratio: f64,
    /// The conducting devices of the timed network, output side first.
    pub path: Vec<String>,
    /// The input values after the switch.
    pub vector: Vector,
    /// Internal nodes the transition connects to the output and whose charge counts.
    pub internal_nodes: Vec<String>,
    /// Internal nodes it connects to the output that already sat at the final level.
    pub nodes_at_final_level: Vec<String>,
    /// Whether the conducting network is a tree (else parallel branches were solved as such).
    pub tree: bool,
    /// `"every vector"` (the slowest over every side-input vector where the input switches the
    /// output) or, past 16 inputs, `"weakest path"` (the weakest path through the input alone).
    pub search: &'static str,
    /// The logical-effort view.
    pub logical_effort_view: EffortView,
}

/// An input and edge with no transition.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Unavailable {
    /// The input.
    pub input: String,
    /// The edge.
    pub edge: Edge,
    /// Why.
    pub why: String,
}

/// One sizing method's cost and delay.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct MethodDelay {
    /// The method.
    pub method: Method,
    /// Its total W/L, where it has widths.
    pub total_w_over_l: Option<f64>,
    /// Its worst `delay_ratio`.
    pub worst_delay_ratio: Option<f64>,
    /// The transition with that ratio: `"input edge"`.
    pub worst_transition: Option<String>,
    /// Whether every delay is at most the delay target times the reference's (to 1e-6).
    pub meets_delay_target: bool,
    /// Why it has no widths, where it has none (e.g. infeasible).
    pub note: Option<String>,
}

/// The delays of a sized cell.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Timing {
    /// What the delays assume.
    pub delay_model: DelayModel,
    /// Per input, fall then rise.
    pub delays: Vec<Delay>,
    /// Inputs and edges with no transition.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub unavailable_delays: Vec<Unavailable>,
}

/// The delay report of the `size` command: the cell's timing, the three methods side by side on its
/// stack order and, when asked, what the stack-order search found.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DelayReport {
    /// The cell's delays.
    #[serde(flatten)]
    pub timing: Timing,
    /// Longest-path, min-area and elmore side by side, on this cell's stack order.
    pub method_comparison: Vec<MethodDelay>,
    /// The delay target the methods are held to (docs/model.md section 12): the plan's, or the
    /// worst ratio the longest-path widths reach.
    pub delay_target: f64,
    /// Whether the target is the default (the longest-path ratio) rather than given.
    pub delay_target_is_default: bool,
    /// The stack-order search, when asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stack_order: Option<StackOrderReport>,
}

impl Timing {
    /// The largest delay ratio over every delay, or over one input's.
    pub fn worst_ratio(&self, input: Option<&str>) -> Option<&Delay> {
        self.delays
            .iter()
            .filter(|d| input.is_none_or(|name| d.input == name))
            .max_by(|a, b| a.delay_ratio.total_cmp(&b.delay_ratio))
    }

    /// The largest Elmore delay over every delay, or over one input's.
    pub fn worst_delay(&self, input: Option<&str>) -> Option<&Delay> {
        self.delays
            .iter()
            .filter(|d| input.is_none_or(|name| d.input == name))
            .max_by(|a, b| a.elmore_rc.total_cmp(&b.elmore_rc))
    }
}
