//! pipeline (to be written).
