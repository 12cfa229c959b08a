//! Checks of isodisc against published values: see tests/.
