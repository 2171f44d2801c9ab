//! One ensemble from one or more conformer files, streamed frame by frame.
//! The topology is perceived once, from the first conformer; every later
//! conformer is checked against it and refused, with its index and the atoms
//! involved, if its atoms or bonding differ.

use std::path::PathBuf;

use crate::error::{Error, Result};
use crate::io::{self, Format, Frame, FrameReader, ReadOptions};
use crate::topology::perceive::{self, FrameChecker};
use crate::topology::Topology;

/// How to read the files of an ensemble.
#[derive(Debug, Clone)]
pub struct SourceOptions {
    /// Format for every file; `None` chooses by extension.
    pub format: Option<Format>,
    /// Reader options (energy key).
    pub read: ReadOptions,
    /// Check every later conformer's bonding against the first (default). When
    /// false only the atoms (count, elements, finite coordinates) are checked.
    pub check_bonding: bool,
}

impl Default for SourceOptions {
    fn default() -> Self {
        SourceOptions {
            format: None,
            read: ReadOptions::default(),
            check_bonding: true,
        }
    }
}

/// A stream of conformers over several files that form one ensemble.
pub struct EnsembleSource {
    files: Vec<PathBuf>,
    opts: SourceOptions,
    next_file: usize,
    reader: Option<Box<dyn FrameReader>>,
    topology: Option<Topology>,
    checker: Option<FrameChecker>,
    count: usize,
}

impl EnsembleSource {
    /// A source over `files`, read in order as one ensemble.
    pub fn new(files: Vec<PathBuf>, opts: SourceOptions) -> Result<EnsembleSource> {
        if files.is_empty() {
            return Err(Error::Usage("no conformer files given".into()));
        }
        Ok(EnsembleSource {
            files,
            opts,
            next_file: 0,
            reader: None,
            topology: None,
            checker: None,
            count: 0,
        })
    }

    /// The files of the ensemble.
    pub fn files(&self) -> &[PathBuf] {
        &self.files
    }

    /// The topology, once the first conformer has been read.
    pub fn topology(&self) -> Option<&Topology> {
        self.topology.as_ref()
    }

    /// Number of conformers read so far.
    pub fn count(&self) -> usize {
        self.count
    }

    /// Reads the next conformer into `frame`. The first one defines the
    /// topology; later ones are checked against it. Returns `Ok(false)` when
    /// every file is exhausted; an ensemble with no conformer at all is an error.
    pub fn read_frame(&mut self, frame: &mut Frame) -> Result<bool> {
        loop {
            if self.reader.is_none() {
                if self.next_file == self.files.len() {
                    if self.count == 0 {
                        return Err(Error::Usage("the input files hold no conformers".into()));
                    }
                    return Ok(false);
                }
                let path = &self.files[self.next_file];
                self.next_file += 1;
                self.reader = Some(io::open(path, self.opts.format, &self.opts.read)?);
            }
            let Some(reader) = self.reader.as_mut() else {
                continue;
            };
            if !reader.read_frame(frame)? {
                self.reader = None;
                continue;
            }
            self.count += 1;
            match self.checker.as_mut() {
                None => {
                    let top = perceive::build(frame)?;
                    self.checker = Some(FrameChecker::new(&top));
                    self.topology = Some(top);
                }
                Some(checker) if self.opts.check_bonding => checker.check(frame, self.count)?,
                Some(checker) => checker.check_atoms(frame, self.count)?,
            }
            return Ok(true);
        }
    }
}
