//! The forms of a library gate's function (docs/model.md section 9), each distinct function
//! parsed and synthesized once per batch: a library repeats a few dozen functions over thousands of
//! gates, so the forms are kept by what decides them (the expression, the pull-up; the process's
//! model names are the batch's), a bounded number at a time.

use std::sync::Arc;

use rustc_hash::FxHashMap;

use crate::diagnostic::{Span, escaped};
use crate::library::plan::{GatePlan, GateProblem, Place};
use crate::logic::{CellLogic, PullUpSpec, synthesize_with_models};
use crate::process::Process;

/// Most distinct functions kept at once; past it one is dropped for each new one, so memory stays
/// bounded however many distinct functions a library has.
const MAX_KEPT: usize = 1024;

/// Why a function has no forms, without the places of the gate it was written in.
#[derive(Debug, Clone)]
enum Refusal {
    /// The expression: the message and where in the expression.
    Expression { message: String, span: Span },
    /// The pull-up fits none of the forms: the first refusal and where in the pull-up's text.
    PullUp { message: String, span: Option<Span> },
}

/// The forms of the functions of a batch, by expression and pull-up, in one process.
pub(crate) struct Forms {
    process: Arc<Process>,
    kept: FxHashMap<Box<str>, Result<Arc<[CellLogic]>, Refusal>>,
    /// The key being looked up, reused.
    key: String,
}

impl Forms {
    /// No forms yet, for gates sized in `process` (its model names are names no pin may take).
    pub(crate) fn new(process: &Arc<Process>) -> Forms {
        Forms { process: Arc::clone(process), kept: FxHashMap::default(), key: String::new() }
    }

    /// Every form of `plan`'s function with its pull-up, its critical input checked; or the gate's
    /// problem, placed in the file.
    pub(crate) fn of(&mut self, plan: &GatePlan) -> Result<Arc<[CellLogic]>, GateProblem> {
        let pull_up = plan.pull_up.as_ref().map(|p| p.text.as_str());
        // The expression's length first, so that no expression and pull-up run into another's.
        self.key.clear();
        self.key.push_str(crate::number::decimal_digits(plan.expression.len() as u64, &mut [0; 20]));
        self.key.push(':');
        self.key.push_str(&plan.expression);
        if let Some(text) = pull_up {
            self.key.push('|');
            self.key.push_str(text);
        }
        let found = match self.kept.get(self.key.as_str()) {
            Some(found) => found.clone(),
            None => {
                let made = synthesized(&plan.expression, pull_up, &self.process);
                if self.kept.len() >= MAX_KEPT
                    && let Some(dropped) = self.kept.keys().next().cloned()
                {
                    self.kept.remove(&dropped);
                }
                self.kept.insert(self.key.as_str().into(), made.clone());
                made
            }
        };
        let forms = found.map_err(|refusal| match refusal {
            Refusal::Expression { message, span } => plan.expression_problem(message, span),
            Refusal::PullUp { message, span } => {
                let pull_up = plan.pull_up.as_ref().expect("a pull-up refusal has a pull-up");
                let place =
                    if pull_up.text.trim() == "mirror" { Place::File(pull_up.span) } else { pull_up.place(span) };
                plan.problem(format!("pull_up: {message}"), place)
            }
        })?;
        let logic = &forms[0];
        if let Some(critical) = &plan.critical
            && !logic.inputs.contains(critical)
        {
            let span = plan.critical_span.unwrap_or(plan.name_span);
            return Err(plan.problem(
                format!(
                    "critical input '{}' is not an input of the gate (its inputs: {})",
                    escaped(critical),
                    logic.inputs.join(", ")
                ),
                Place::File(span),
            ));
        }
        Ok(forms)
    }

    /// How many functions are kept (at most [`MAX_KEPT`]).
    #[cfg(test)]
    pub(crate) fn kept(&self) -> usize {
        self.kept.len()
    }
}

/// Every form of `expression` in `process`, with `pull_up` (a structure or `mirror`): the forms
/// whose logic stage it fits, as for one gate; where it fits none, the first refusal.
fn synthesized(expression: &str, pull_up: Option<&str>, process: &Process) -> Result<Arc<[CellLogic]>, Refusal> {
    let forms = synthesize_with_models(expression, &process.model_names())
        .map_err(|error| Refusal::Expression { message: error.to_string(), span: error.span() })?;
    let Some(text) = pull_up else { return Ok(forms.into()) };
    let spec = if text.trim() == "mirror" { PullUpSpec::Mirror } else { PullUpSpec::Written(text) };
    let mut first_error = None;
    let mut accepted = Vec::with_capacity(forms.len());
    for form in forms {
        match form.with_pull_up(spec) {
            Ok(form) => accepted.push(form),
            Err(error) => {
                first_error.get_or_insert(error);
            }
        }
    }
    match (accepted.is_empty(), first_error) {
        (true, Some(error)) => Err(Refusal::PullUp { message: error.to_string(), span: error.span() }),
        _ => Ok(accepted.into()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnostic::Source;
    use crate::library::tests::library;

    #[test]
    fn a_function_is_synthesized_once_and_its_problems_placed_per_gate() {
        let text = "[[gate]]\nname = \"a\"\nexpr = \"nand2\"\n[[gate]]\nname = \"b\"\nexpr = \"nand2\"\n\
                    [[gate]]\nname = \"c\"\nexpr = \"nand2\"\npull_up = \"a | b\"\n\
                    [[gate]]\nname = \"d\"\nexpr = \"!(a &)\"\n[[gate]]\nname = \"e\"\nexpr = \"!(a &)\"\n";
        let library = library(text);
        let mut forms = Forms::new(&library.process);
        let [a, b, c] = [0, 1, 2].map(|index| forms.of(&library.gate(index).unwrap()).unwrap());
        assert!(Arc::ptr_eq(&a, &b));
        // A pull-up changes the forms: nand2 with a parallel pull-up is its own entry.
        assert!(!Arc::ptr_eq(&a, &c));
        assert_eq!(forms.kept(), 2);
        // One refusal, placed in each gate's own line.
        let source = Source::file("lib.toml", text);
        for (index, line) in [(3, "line 13"), (4, "line 16")] {
            let problem = forms.of(&library.gate(index).unwrap()).unwrap_err().render(&source);
            assert!(problem.contains(line), "{problem}");
        }
        assert_eq!(forms.kept(), 3);
    }

    #[test]
    fn the_functions_kept_are_bounded() {
        let text: String = (0..MAX_KEPT + 10)
            .map(|index| format!("[[gate]]\nname = \"g{index}\"\nexpr = \"!(a{index} & b)\"\n"))
            .collect();
        let library = library(&text);
        let mut forms = Forms::new(&library.process);
        for plan in library.gates() {
            forms.of(&plan.unwrap()).unwrap();
        }
        assert_eq!(forms.kept(), MAX_KEPT);
    }
}
