//! Ingestion, the first stage: raw files become a corpus. [`read`] finds
//! documents in folders, JSON Lines, CSV and stdin; [`tokenize`] cuts their
//! text into tokens; [`vocab`] counts and prunes the words; [`corpus`] drives
//! the three and holds the result, documents as word ids.

pub mod corpus;
pub mod read;
pub mod tokenize;
pub mod vocab;
