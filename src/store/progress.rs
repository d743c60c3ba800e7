//! How far a long piece of work has come, told to whoever wants to know through a callback.
//! The store knows nothing of terminals: the command line draws a meter from these calls
//! (or nothing, when its output is not a terminal).

use std::cell::RefCell;

/// One step of a long piece of work: `done` of `total` rows (when the total is known) of a
/// stage such as "importing" or "verifying".
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Progress {
    pub stage: &'static str,
    pub done: u64,
    pub total: Option<u64>,
}

/// The callback that is told of progress.
pub type ProgressFn = Box<dyn FnMut(Progress) + Send>;

/// A callback slot that a `&self` method may call. Calls made while the callback is running
/// (it cannot happen through the store, but a callback could reach back) are dropped.
#[derive(Default)]
pub struct ProgressSlot(RefCell<Option<ProgressFn>>);

impl ProgressSlot {
    pub fn set(&self, f: Option<ProgressFn>) -> Option<ProgressFn> {
        match self.0.try_borrow_mut() {
            Ok(mut slot) => std::mem::replace(&mut *slot, f),
            Err(_) => f,
        }
    }

    pub fn take(&self) -> Option<ProgressFn> {
        self.set(None)
    }

    pub fn tell(&self, stage: &'static str, done: u64, total: Option<u64>) {
        if let Ok(mut slot) = self.0.try_borrow_mut() {
            if let Some(f) = slot.as_mut() {
                f(Progress { stage, done, total });
            }
        }
    }
}

impl std::fmt::Debug for ProgressSlot {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("ProgressSlot")
    }
}
