//! Tree ensembles built on `copse-tree`.
