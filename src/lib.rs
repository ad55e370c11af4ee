//! antinode: a finite-element modal solver for beams, thin-walled tubes and panels that decides where
//! to attach tuned vibration absorbers and how to tune them.
//!
//! This facade re-exports the library crates:
//! - [`mesh`]: the model file, its validation into a [`mesh::Structure`], section properties, VTK
//!   output;
//! - [`solver`]: elements, assembly, eigensolver, static and frequency response;
//! - [`placement`]: absorber screening, tuning rules, ranking and design.
//!
//! The `antinode` program (crate `antinode-cli`) drives the whole job from the command line.

pub use antinode_mesh as mesh;
pub use antinode_placement as placement;
pub use antinode_solver as solver;
