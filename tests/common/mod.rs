//! Helpers shared by the integration tests.
#![allow(dead_code)]

pub mod data;
pub mod dump;
pub mod faithful;
pub mod nist;
pub mod output;
pub mod run;
pub mod workbooks;
