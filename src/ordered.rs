//! Work on a list in parallel, handed on in the list's order: `jobs` worker threads take the
//! items in turn, and each result is given to the caller as soon as every earlier one has been,
//! so output keeps the input's order and is written while later items are still at work.
//!
//! Workers run at most a window of items ahead of the first result not yet handed on, so the
//! results held waiting for an earlier one stay few (memory bounded by the window, not the list).
//! Imports nothing of the crate.

use std::collections::BTreeMap;
use std::sync::mpsc;
use std::sync::{Condvar, Mutex};

/// How far workers may run ahead of the first result not yet handed on, per worker.
const WINDOW_PER_JOB: usize = 2;

/// Where the workers are.
struct State {
    /// The next item to take.
    next: usize,
    /// Items handed on so far.
    handed: usize,
    /// The caller stopped (its `emit` failed): take nothing more.
    stopped: bool,
}

/// Run `work` on every item of `items` on `jobs` threads (at least 1), calling `emit(index,
/// result)` in the items' order on the calling thread. The first error of `emit` stops the
/// workers (items at work finish, no new one is taken) and is returned.
pub fn map_in_order<T, R, E>(
    items: &[T],
    jobs: usize,
    work: impl Fn(usize, &T) -> R + Sync,
    mut emit: impl FnMut(usize, R) -> Result<(), E>,
) -> Result<(), E>
where
    T: Sync,
    R: Send,
{
    let jobs = jobs.clamp(1, items.len().max(1));
    let window = jobs * WINDOW_PER_JOB;
    let state = Mutex::new(State { next: 0, handed: 0, stopped: false });
    let turn = Condvar::new();
    let (send, receive) = mpsc::channel::<(usize, R)>();
    std::thread::scope(|scope| {
        for _ in 0..jobs {
            let send = send.clone();
            let (state, turn, work) = (&state, &turn, &work);
            scope.spawn(move || {
                loop {
                    let index = {
                        let mut at = state.lock().unwrap_or_else(|poisoned| poisoned.into_inner());
                        while !at.stopped && at.next < items.len() && at.next >= at.handed + window {
                            at = turn.wait(at).unwrap_or_else(|poisoned| poisoned.into_inner());
                        }
                        if at.stopped || at.next >= items.len() {
                            return;
                        }
                        at.next += 1;
                        at.next - 1
                    };
                    if send.send((index, work(index, &items[index]))).is_err() {
                        return;
                    }
                }
            });
        }
        drop(send);
        let mut waiting: BTreeMap<usize, R> = BTreeMap::new();
        let mut handed = 0;
        let mut outcome = Ok(());
        for (index, result) in receive.iter() {
            waiting.insert(index, result);
            while let Some(result) = waiting.remove(&handed) {
                if let Err(error) = emit(handed, result) {
                    outcome = Err(error);
                    break;
                }
                handed += 1;
            }
            let mut at = state.lock().unwrap_or_else(|poisoned| poisoned.into_inner());
            at.handed = handed;
            at.stopped |= outcome.is_err();
            turn.notify_all();
            drop(at);
            if outcome.is_err() {
                break;
            }
        }
        outcome
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    #[test]
    fn results_come_in_order_whatever_finishes_first() {
        let items: Vec<u64> = (0..40).collect();
        let mut seen = Vec::new();
        // Early items take longest, so later ones finish first.
        let work = |_, &item: &u64| {
            std::thread::sleep(Duration::from_millis((40 - item) / 4));
            item * item
        };
        map_in_order(&items, 4, work, |index, result| {
            seen.push((index, result));
            Ok::<(), ()>(())
        })
        .unwrap();
        let expected: Vec<(usize, u64)> = items.iter().map(|&i| (i as usize, i * i)).collect();
        assert_eq!(seen, expected);
    }

    #[test]
    fn workers_stay_within_the_window() {
        let items: Vec<usize> = (0..30).collect();
        let started = Mutex::new(Vec::new());
        let work = |index, _: &usize| {
            started.lock().unwrap().push(index);
            // Item 0 is slow: nothing past the window may start before it is handed on.
            if index == 0 {
                std::thread::sleep(Duration::from_millis(100));
            }
            index
        };
        let mut first = None;
        map_in_order(&items, 3, work, |index, _| {
            if index == 0 {
                first = Some(started.lock().unwrap().iter().copied().max().unwrap());
            }
            Ok::<(), ()>(())
        })
        .unwrap();
        let most = first.unwrap();
        assert!(most < 3 * WINDOW_PER_JOB, "item {most} started while item 0 was at work");
    }

    #[test]
    fn an_error_stops_the_work() {
        let items: Vec<usize> = (0..1000).collect();
        let done = Mutex::new(0usize);
        let work = |index, _: &usize| {
            *done.lock().unwrap() += 1;
            index
        };
        let error = map_in_order(&items, 2, work, |index, _| if index == 5 { Err(index) } else { Ok(()) });
        assert_eq!(error, Err(5));
        assert!(*done.lock().unwrap() < 100, "{}", done.lock().unwrap());
        let mut none = 0;
        map_in_order(
            &[] as &[u8],
            4,
            |_, _| 0,
            |_, _: i32| {
                none += 1;
                Ok::<(), ()>(())
            },
        )
        .unwrap();
        assert_eq!(none, 0);
    }
}
