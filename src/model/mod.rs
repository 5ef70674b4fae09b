//! model (to be written).
