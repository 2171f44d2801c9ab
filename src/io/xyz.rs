//! Xyz reader (placeholder until the reader lands).

use std::io::BufRead;
use std::path::PathBuf;

use super::{Frame, FrameReader, ReadOptions};
use crate::error::{Error, Result};

/// Streaming Xyz reader.
pub struct XyzReader {
    path: PathBuf,
}

impl XyzReader {
    /// A reader over `input`, naming `path` in errors.
    pub fn new(_input: Box<dyn BufRead>, path: PathBuf, _opts: ReadOptions) -> Self {
        XyzReader { path }
    }
}

impl FrameReader for XyzReader {
    fn read_frame(&mut self, _frame: &mut Frame) -> Result<bool> {
        Err(Error::file(&self.path, "reader not built yet"))
    }
}
