//! Stage order.
