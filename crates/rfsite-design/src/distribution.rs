//! Passive distribution budget (to be written).
