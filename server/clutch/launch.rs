//! The launch preview: the engine, the slipping clutch, the driveline and the tires simulated
//! from the launch to lockup, its API, and the counterweight search for a launch target.

/// The launch preview request (as the API receives it), its validation and its answer.
pub mod request;
/// The simulation itself: state, modes, the RK4 step, events.
pub mod simulation;
/// Closed forms of slip energy and engagement time (textbook checks of the simulation).
#[cfg(test)]
mod slip;
/// The counterweight that meets a lockup-time target or a slip-energy limit in the launch preview.
pub mod target;
