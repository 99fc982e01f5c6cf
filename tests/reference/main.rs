//! Checks of the main job against sources outside the project: published tables, worked examples
//! and reference tools. Each check names its source beside it.

mod published;
mod scipy;
