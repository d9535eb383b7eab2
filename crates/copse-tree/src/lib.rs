//! copse-tree: one CART-style decision tree grown on pre-binned, column-major data.
//!
//! The pieces, one concept per file:
//! - [`data`]: input descriptions and the binned training matrix ([`BinnedData`]),
//!   with the binning itself in its own file;
//! - [`outcome`]: a borrowed view of the outcome being modelled ([`OutcomeView`]);
//! - [`impurity`]: Gini, entropy and variance, and the split scores built from them;
//! - [`settings`]: what the grower may do ([`TreeSettings`]);
//! - [`grow`]: the grower itself ([`Grower`]), with reusable scratch buffers: the
//!   candidate split, the two-class and general engines, the scans and partitioning,
//!   one file each;
//! - [`tree`]: the grown tree ([`Tree`]) and prediction: the node and its serialized
//!   record, a leaf's output, descent by rows and blocks, the compact layout;
//! - [`render`]: a text rendering of a tree for people to read.
//!
//! # Example
//! ```
//! use copse_tree::{BinnedData, FeatureMeta, Grower, OutcomeView, TreeSettings};
//! use ndarray::array;
//!
//! let x = array![[1.0], [2.0], [3.0], [4.0]];
//! let meta = vec![FeatureMeta::numeric("size")];
//! let data = BinnedData::new(x.view(), &meta, 256).unwrap();
//! let classes = [0u32, 0, 1, 1];
//! let target = OutcomeView::classes(&classes, 2).unwrap();
//! let mut grower = Grower::new(TreeSettings::default());
//! let tree = grower.grow(&data, &target, &[1.0; 4], 7).unwrap();
//! // The only useful threshold is the midpoint between 2 and 3.
//! assert_eq!(tree.predict_row(&[2.4]), &[1.0, 0.0]);
//! assert_eq!(tree.predict_row(&[2.6]), &[0.0, 1.0]);
//! ```
#![deny(missing_docs)]
#![forbid(unsafe_code)]

mod check;
pub mod data;
pub mod error;
pub mod grow;
pub mod impurity;
pub mod outcome;
pub mod render;
pub mod settings;
pub mod tree;

pub use data::{BinnedData, FeatureBins, FeatureKind, FeatureMeta, MISSING_BIN};
pub use error::{Error, ErrorKind, Result};
pub use grow::Grower;
pub use impurity::Impurity;
pub use outcome::OutcomeView;
pub use settings::{CutChoice, TreeSettings};
pub use tree::{LeafValue, Node, Tree};
