//! Warnings about a sized cell that a designer should see before trusting it: a result of the elmore
//! method far above the classic rule's area, a stage driving less than its own input (h below 1),
//! and a device the process draws well above its sized W/L. Each is one line of text; the command
//! prints it on standard error as a warning.

use super::CellReport;
use super::number;
use crate::sizing::Method;
use crate::sizing::target::WARN_AREA;

/// A drawn W/L more than this fraction above the sized one is named.
pub const DRAWN_ABOVE: f64 = 0.05;

/// The warnings about one cell, in a stable order.
pub fn of(report: &CellReport) -> Vec<String> {
    let figures = &report.figures;
    let mut warnings = Vec::new();
    if let Some(delays) = &report.delays {
        let total = |method: Method| {
            delays.method_comparison.iter().find(|row| row.method == method).and_then(|row| row.total_w_over_l)
        };
        if let (true, Some(elmore), Some(longest)) =
            (figures.method.sizes_by_delay(), total(figures.method), total(Method::LongestPath))
        {
            if elmore > WARN_AREA * longest {
                warnings.push(format!(
                    "the elmore method's total W/L {} is {} times longest-path's {}: a larger --delay-target \
                     trades a little delay for much less area (see --tradeoff)",
                    number(elmore),
                    number(elmore / longest),
                    number(longest)
                ));
            }
        }
        let mut low: Vec<(String, f64)> = Vec::new();
        for delay in &delays.timing.delays {
            let h = delay.logical_effort_view.h;
            if h < 1.0 && !low.iter().any(|(input, _)| *input == delay.input) {
                low.push((delay.input.clone(), h));
            }
        }
        if let Some(&(_, h)) = low.iter().min_by(|a, b| a.1.total_cmp(&b.1)) {
            let names: Vec<String> = low.iter().map(|(input, _)| format!("'{input}'")).collect();
            warnings.push(format!(
                "h is below 1 (least {}, at {} {}): the gate drives less than its own input, so its own \
                 parasitic delay dominates and a faster gate costs area for little gain",
                number(h),
                if names.len() > 1 { "inputs" } else { "input" },
                names.join(", ")
            ));
        }
    }
    // A stage's h depends on the load only when the cell is timed against one (a delay option, the
    // delays view): untimed, the default fan-out would warn of every cell of several stages.
    if figures.stages.len() > 1 && report.cell_delays.is_some() {
        for stage in &figures.stages {
            if let Some(input) = stage.inputs.iter().find(|input| input.electrical_effort < 1.0) {
                warnings.push(format!(
                    "stage {} ({}) has h = {} below 1 at its input '{}': it drives less than its own input",
                    stage.stage,
                    stage.role,
                    number(input.electrical_effort),
                    input.net
                ));
            }
        }
    }
    for device in &figures.transistors {
        if device.drawn_w_over_l > device.w_over_l * (1.0 + DRAWN_ABOVE) {
            warnings.push(format!(
                "{} is drawn at W/L {}, {}% above its sized {} (the process's grid or minimum width): the drawn \
                 figures stand beside the sized ones",
                device.name,
                number(device.drawn_w_over_l),
                number(100.0 * (device.drawn_w_over_l / device.w_over_l - 1.0)),
                number(device.w_over_l)
            ));
        }
    }
    warnings
}
