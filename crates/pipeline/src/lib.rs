//! Runs twistlot's jobs end to end; the only crate that knows all the others.
//!
//! For: finding plugins ([`plugins`]), and (as the issues land) the shift run,
//! the plan run and the trend run, plus plant config loading.
//!
//! Not for: computations (layer-1 crates), rendering (report) or printing (cli).
//!
//! Main types: [`PluginCatalog`].

pub mod plugins;

pub use plugins::{shipped_plugins_dir, PluginCatalog, PluginEntry};
