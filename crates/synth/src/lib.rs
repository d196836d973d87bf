//! A deterministic generator of realistic torsion-spring rig exports.
//!
//! For: the demo plant's shift in `sample_lots/`, the round-trip tests of every
//! shipped layout, and the ingest benchmark's data. Given the same seed it writes
//! the same bytes.
//!
//! Not for: anything a verdict rests on. The data are invented; the generator
//! knows the physics only well enough to make curves look like a rig's (linear
//! law, friction loop, slack, noise, set, coil bind; for free swings, viscous damping,
//! a stiffening term and dry friction).
//!
//! Main types: [`SpringModel`] (one simulated test), [`DecayModel`] (one simulated
//! free swing), [`WriteStyle`] and [`write_layout`] / [`write_decay_layout`] (any
//! declarative layout, from its manifest), [`DemoPlan`] and
//! [`generate_shift`] (a whole shift), [`generate_bench`].

pub mod decay;
pub mod demo;
pub mod spring;
pub mod writer;

pub use decay::{DecayError, DecayModel, DecayRecord};
pub use demo::{generate_bench, generate_shift, DemoError, DemoPlan, GeneratedFile};
pub use spring::SpringModel;
pub use writer::{
    printed_resolution, write_decay_layout, write_gantry_json, write_layout, WriteError, WriteStyle,
};
