//! Element kernels: pure functions of geometry, section and material returning fixed-size
//! matrices. They know nothing of global storage.

pub mod beam;
pub mod point_mass;
pub mod shell;
pub mod shell_quad;
pub mod shell_tri;
pub mod spring;
