//! Run settings.
