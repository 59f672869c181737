//! The clutch as the capacity calculation sees it: springs and their bench tests, the adjuster
//! thread, static and centrifugal clamp, facing friction, the engine's torque curve, torque
//! capacity, lockup against the curve, the capacity API (request and report) and the search for
//! a setting that meets targets.

/// Clamp load: static spring load from compression, centrifugal load from the levers.
pub mod clamp;
/// Facing materials: friction coefficients, temperature limits, friction surfaces.
pub mod friction;
/// Capacity against engine speed: the curve, the lockup speed, the launch ratio.
pub mod lockup;
/// Search for adjuster turns and counterweight that meet lockup and launch targets.
pub mod recommend;
/// The capacity calculation report, in the request's units, with warnings.
pub mod report;
/// The capacity calculation request (as received by the API) and its validation.
pub mod request;
/// A spring set across its bench tests: rates, spread, sag.
pub mod spring_health;
/// Coil springs: bench rate, set spread, sag between tests, rate from wire geometry.
pub mod springs;
/// Adjuster-screw threads: axial travel per turn from TPI or metric pitch.
pub mod threads;
/// Torque capacity of a dry plate clutch and its effective friction radius.
pub mod torque;
/// Engine torque curve from dyno points, with linear interpolation.
pub mod torque_curve;
