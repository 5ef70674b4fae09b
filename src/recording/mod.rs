//! recording (to be written).
