//! What the bench binaries share: the best-of timer and the deterministic expression generator.
//!
//! Each bench includes this module (`mod support;`) and uses part of it.
#![allow(dead_code)]

use std::time::{Duration, Instant};

/// Best time of `rounds` calls of `work`, after one warm-up call.
pub fn best_of(rounds: usize, mut work: impl FnMut()) -> Duration {
    work();
    (0..rounds)
        .map(|_| {
            let start = Instant::now();
            work();
            start.elapsed()
        })
        .min()
        .unwrap_or_default()
}

/// A deterministic AND/OR tree of `literals` literal occurrences over `inputs` names, as text.
pub fn big_expression(literals: usize, inputs: usize) -> String {
    let mut state = 0x2545_F491_4F6C_DD1Du64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    // Build groups bottom-up: leaves, then AND/OR nodes of 2 to 4 children, alternating by level.
    // The first `inputs` leaves name every input once; the rest repeat them at random.
    let mut level: Vec<String> =
        (0..literals).map(|i| format!("x{}", if i < inputs { i } else { next() as usize % inputs })).collect();
    let mut and = true;
    while level.len() > 1 {
        let mut upper = Vec::new();
        let mut rest = level.as_slice();
        while !rest.is_empty() {
            let take = (2 + next() as usize % 3).min(rest.len());
            let (group, tail) = rest.split_at(take);
            upper.push(if group.len() == 1 {
                group[0].clone()
            } else {
                format!("({})", group.join(if and { " & " } else { " | " }))
            });
            rest = tail;
        }
        level = upper;
        and = !and;
    }
    format!("!{}", level[0])
}
