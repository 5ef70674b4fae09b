//! simulate (to be written).
