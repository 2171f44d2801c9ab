//! Pdb reader (placeholder until the reader lands).

use std::io::BufRead;
use std::path::PathBuf;

use super::{Frame, FrameReader, ReadOptions};
use crate::error::{Error, Result};

/// Streaming Pdb reader.
pub struct PdbReader {
    path: PathBuf,
}

impl PdbReader {
    /// A reader over `input`, naming `path` in errors.
    pub fn new(_input: Box<dyn BufRead>, path: PathBuf, _opts: ReadOptions) -> Self {
        PdbReader { path }
    }
}

impl FrameReader for PdbReader {
    fn read_frame(&mut self, _frame: &mut Frame) -> Result<bool> {
        Err(Error::file(&self.path, "reader not built yet"))
    }
}
