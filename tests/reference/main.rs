//! Checks of the main job against sources outside the project: published tables, worked examples
//! and reference tools (decks simulated by ngspice from Debian's packages, scipy from PyPI). Each
//! check names its source beside it.

mod calibrate;
mod calibrate_batch;
mod deck_run;
mod deck_simulation;
mod delay;
mod delay_ranking;
mod effort;
mod elmore_target;
mod models;
mod netlist_names;
mod published;
mod render;
mod scipy;
mod stage_decks;
mod stage_effort;
mod stage_rails;
mod stages;
mod support;
mod vectors;
mod worst_case;
