//! Calibration of the short-count interval (filled below).
