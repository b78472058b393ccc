//! lookout runtime (being built).
#![no_std]
