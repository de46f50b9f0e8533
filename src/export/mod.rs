//! Merged-set export (in progress).
