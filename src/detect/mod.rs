//! detect (to be written).
