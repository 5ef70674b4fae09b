//! report (to be written).
