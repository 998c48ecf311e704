//! The scheduler's queue: `order` holds the slot numbers of the queued pulses sorted by their
//! next edge, latest first, so the next edge is at `order[len − 1]`; every access is a checked
//! lookup (no panic path).

use super::{Pulse, Scheduler};

impl<const CHANNELS: usize, const QUEUE: usize> Scheduler<CHANNELS, QUEUE> {
    /// The slot number at `order[i]` and its pulse; `None` only past the end of `order` (slot
    /// numbers in `order` are always below `QUEUE`).
    pub(super) fn queued(&self, i: usize) -> Option<(usize, &Pulse)> {
        let slot = usize::from(*self.order.get(i)?);
        Some((slot, self.slots.get(slot)?))
    }

    /// The next edge's slot and pulse (`order[len − 1]`), `None` when the queue is empty.
    pub(super) fn head(&self) -> Option<(usize, &Pulse)> {
        self.queued(usize::from(self.len).checked_sub(1)?)
    }

    /// Inserts `slot` into `order` so that it comes out after every slot whose `next` is at or
    /// before its own (descending order: after the prefix of later ones). The caller has checked
    /// that the queue has room.
    pub(super) fn insert_sorted(&mut self, slot: u8) {
        let len = usize::from(self.len);
        if len >= self.order.len() {
            return;
        }
        sink(&mut self.order, &self.slots, len, slot);
        self.len += 1;
    }

    /// Moves the head (`order[len − 1]`), whose `next` just grew, to its place: before (towards
    /// index 0) every slot that is due at or before it. In place, no block move.
    pub(super) fn sift_head(&mut self) {
        let Some(top) = usize::from(self.len).checked_sub(1) else {
            return;
        };
        if let Some(&slot) = self.order.get(top) {
            sink(&mut self.order, &self.slots, top, slot);
        }
    }

    /// Removes `order[i]`, keeping the order of the rest.
    pub(super) fn remove_at(&mut self, i: usize) {
        let len = usize::from(self.len);
        let Some(rest) = self.order.get_mut(i..len) else {
            return;
        };
        if !rest.is_empty() {
            rest.rotate_left(1);
            self.len -= 1;
        }
    }
}

/// Writes `slot` into `order[at]` after moving it towards index 0 past every entry due at or
/// before it (`order` sorted by `next` descending; `order[at]` is free to overwrite).
#[inline(always)]
fn sink(order: &mut [u8], slots: &[Pulse], at: usize, slot: u8) {
    let key = slots.get(usize::from(slot)).map_or(0, |p| p.next);
    let mut i = at;
    while let Some(&prev) = i.checked_sub(1).and_then(|j| order.get(j)) {
        match slots.get(usize::from(prev)) {
            Some(p) if p.next <= key => {}
            _ => break,
        }
        if let Some(x) = order.get_mut(i) {
            *x = prev;
        }
        i -= 1;
    }
    if let Some(x) = order.get_mut(i) {
        *x = slot;
    }
}
