//! Layout files: the TOML schema as written ([`schema`]), validation into a
//! [`Plan`] ([`validate`]), the paraxial ABCD check ([`paraxial`]) and the
//! sampling advisor ([`advisor`]).
//!
//! Conventions: units are required on every dimensional value and are
//! converted to SI once, in validation; unknown keys and kinds are errors
//! naming the file, the line and the key.

pub mod advisor;
pub mod paraxial;
pub mod plan;
pub mod schema;
pub mod validate;

pub use plan::{ModesSpec, Operation, Plan, ProbeSpec, Source, Step};
pub use validate::{load, parse};
