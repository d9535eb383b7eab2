//! Scratch buffers shared out to the pieces of a parallel loop and taken back after
//! each piece, so that a loop makes its large buffers once per thread, not once per
//! piece: rayon may split a loop into many more pieces than threads, and a buffer
//! freed and made again at each piece leaves the allocator holding memory the next
//! stage cannot use (peak memory grows, and the fresh pages cost time to fill).
use std::sync::Mutex;

/// The buffers not in use by any piece.
pub(crate) struct Shelf<T>(Mutex<Vec<T>>);

impl<T> Shelf<T> {
    /// An empty shelf.
    pub(crate) fn new() -> Self {
        Shelf(Mutex::new(Vec::new()))
    }

    /// A buffer from the shelf, or a new one from `make` when none is free; it goes
    /// back on the shelf when the returned guard is dropped.
    pub(crate) fn take(&self, make: impl FnOnce() -> T) -> Lent<'_, T> {
        let item = self.0.lock().ok().and_then(|mut v| v.pop());
        Lent {
            shelf: self,
            item: Some(item.unwrap_or_else(make)),
        }
    }
}

/// A buffer lent by a [`Shelf`], returned to it on drop.
pub(crate) struct Lent<'s, T> {
    shelf: &'s Shelf<T>,
    item: Option<T>,
}

impl<T> Lent<'_, T> {
    /// The buffer.
    pub(crate) fn get(&mut self) -> &mut T {
        self.item
            .as_mut()
            .expect("a lent buffer is present until it is dropped")
    }
}

impl<T> Drop for Lent<'_, T> {
    fn drop(&mut self) {
        if let (Some(item), Ok(mut v)) = (self.item.take(), self.shelf.0.lock()) {
            v.push(item);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_returned_buffer_is_lent_again() {
        let shelf = Shelf::new();
        let mut made = 0;
        {
            let mut a = shelf.take(|| {
                made += 1;
                vec![1u8; 4]
            });
            a.get().push(2);
        }
        let mut b = shelf.take(|| {
            made += 1;
            Vec::new()
        });
        assert_eq!(made, 1);
        assert_eq!(b.get(), &vec![1, 1, 1, 1, 2]);
        // While `b` is out, a second taker gets a new buffer.
        let mut c = shelf.take(|| vec![9u8]);
        assert_eq!(c.get(), &vec![9]);
    }
}
