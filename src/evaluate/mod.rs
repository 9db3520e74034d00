//! Evaluation: how good a fitted model is and where new documents fall in
//! it. [`heldout`] holds the estimators on fixed topics (fold-in, document
//! completion, left-to-right); [`coherence`] and [`diagnostics`] score the
//! topics themselves; [`uncertainty`] gives credible intervals; [`score`]
//! bridges a saved model to those estimators; [`compare`] matches topics
//! between models; [`k_search`] fits several numbers of topics and
//! recommends one.

pub mod coherence;
pub mod compare;
pub mod diagnostics;
pub mod drift;
pub mod heldout;
pub mod k_search;
pub mod score;
pub mod uncertainty;
