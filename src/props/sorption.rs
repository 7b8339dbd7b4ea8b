//! Placeholder: see issue 2.
