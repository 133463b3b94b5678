//! Bench-data fitting: from measured I_out(V_out) curves of a mirror to a part class.
//!
//! Owns reading the measurement file, the per-curve Early-voltage construction, the model
//! fit through the circuit solver, the emitted catalog class and the fit's renderers.
//! It must not parse CLI arguments or decide exit codes.

pub mod curves;
pub mod lm;
pub mod measurements;
