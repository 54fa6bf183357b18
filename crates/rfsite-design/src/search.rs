//! Antenna choice from candidate coverage (to be written).
