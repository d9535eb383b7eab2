//! A leaf's output as prediction hands it out, built inline for one or two outputs.

/// A leaf's output as [`Tree::leaf_value`](super::Tree::leaf_value) gives it: derefs to `[f64]` (the class
/// probabilities, or the one value in regression). Two-class and regression leaves
/// keep their output inside their node, so the slice is built here, inline, with no
/// allocation; with three or more classes it borrows the tree's table.
#[derive(Clone, Copy)]
pub struct LeafValue<'a>(pub(super) Repr<'a>);

#[derive(Clone, Copy)]
pub(super) enum Repr<'a> {
    /// The first `len` (1 or 2) values.
    Inline {
        values: [f64; 2],
        len: u8,
    },
    Shared(&'a [f64]),
}

impl std::ops::Deref for LeafValue<'_> {
    type Target = [f64];
    #[inline(always)]
    fn deref(&self) -> &[f64] {
        match &self.0 {
            Repr::Inline { values, len } => &values[..usize::from(*len)],
            Repr::Shared(s) => s,
        }
    }
}

impl std::fmt::Debug for LeafValue<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        <[f64] as std::fmt::Debug>::fmt(self, f)
    }
}

impl<'b> IntoIterator for &'b LeafValue<'_> {
    type Item = &'b f64;
    type IntoIter = std::slice::Iter<'b, f64>;
    fn into_iter(self) -> Self::IntoIter {
        self.iter()
    }
}

impl PartialEq for LeafValue<'_> {
    fn eq(&self, other: &Self) -> bool {
        **self == **other
    }
}

impl PartialEq<[f64]> for LeafValue<'_> {
    fn eq(&self, other: &[f64]) -> bool {
        **self == *other
    }
}

impl PartialEq<&[f64]> for LeafValue<'_> {
    fn eq(&self, other: &&[f64]) -> bool {
        **self == **other
    }
}

impl<const N: usize> PartialEq<[f64; N]> for LeafValue<'_> {
    fn eq(&self, other: &[f64; N]) -> bool {
        **self == other[..]
    }
}

impl<const N: usize> PartialEq<&[f64; N]> for LeafValue<'_> {
    fn eq(&self, other: &&[f64; N]) -> bool {
        **self == other[..]
    }
}
