//! Library half of the `twinstep` command: the trace reader, the report formats, the gate, the `run` and `demo`
//! drivers, and `init`. The binary (`main.rs`) only parses arguments and prints; keeping the rest here lets the tests
//! drive the reader and renderers in memory.

pub mod analysis;
pub mod demo;
pub mod failure;
pub mod gate;
pub mod init;
pub mod input;
pub mod progress;
pub mod report;
pub mod run;
pub mod sweep;
pub mod trace;
