//! `themata compare`: how the topics of one model folder relate to those of
//! another: the matching, distances, prevalence before and after, and the
//! top words each topic gained and lost.

use std::io::Write;
use std::path::PathBuf;

use serde::Serialize;
use themata::evaluate::drift::{self, DEFAULT_MATCH_THRESHOLD};
use themata::model::folder::load_model;
use themata::report::ListingFormat;
use themata::settings::ShareRange;

use super::Failure;

/// Arguments of `themata compare`.
#[derive(clap::Args, Debug)]
#[command(
    after_help = "Topics are matched by minimum total Jensen-Shannon distance between their word distributions (Hungarian method), over the union of the two vocabularies; a match counts when its distance is below the threshold. Prevalence is a topic's share of all tokens."
)]
pub struct CompareArgs {
    /// The earlier model folder
    #[arg(value_name = "OLD")]
    pub old: PathBuf,
    /// The later model folder
    #[arg(value_name = "NEW")]
    pub new: PathBuf,
    /// A match counts when the distance is below D
    #[arg(long, value_name = "D", default_value_t = DEFAULT_MATCH_THRESHOLD, value_parser = ShareRange::ABOVE_ZERO.parser())]
    pub threshold: f64,
    /// Output layout
    #[arg(long, value_enum, default_value_t = ListingFormat::Table)]
    pub format: ListingFormat,
}

/// One row of the comparison.
#[derive(Serialize)]
struct Row {
    new_id: u32,
    old_id: Option<u32>,
    distance: Option<f64>,
    matched: bool,
    prevalence_before: Option<f64>,
    prevalence_after: f64,
    words_gained: Vec<String>,
    words_lost: Vec<String>,
    top_words: Vec<String>,
}

/// The JSON printed by `--format json`.
#[derive(Serialize)]
struct Comparison {
    threshold: f64,
    matched_share: f64,
    topics: Vec<Row>,
    /// Old topics no new topic took over.
    unmatched_old: Vec<u32>,
}

/// Runs `themata compare`.
pub fn run(args: CompareArgs) -> Result<(), Failure> {
    let old = load_model(&args.old)?;
    let new = load_model(&args.new)?;
    let drift = drift::drift(&old, &new, args.threshold);
    let pool_id = |index: usize| old.topic_ids[index];
    let rows: Vec<Row> = drift
        .topics
        .iter()
        .map(|topic| Row {
            new_id: new.topic_ids[topic.index],
            old_id: topic.predecessor_index.map(pool_id),
            distance: topic.distance,
            matched: topic.predecessor_index.is_some(),
            prevalence_before: topic.prevalence_before,
            prevalence_after: topic.prevalence_after,
            words_gained: topic.words_gained.clone(),
            words_lost: topic.words_lost.clone(),
            top_words: topic.top_words.clone(),
        })
        .collect();
    let comparison = Comparison {
        threshold: args.threshold,
        matched_share: drift.matched_share(),
        topics: rows,
        unmatched_old: drift.unmatched_old.iter().map(|&index| pool_id(index)).collect(),
    };
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    write_comparison(&mut out, &comparison, args.format)
        .and_then(|()| out.flush())
        .map_err(Failure::output)
}

fn optional(value: Option<f64>, digits: usize) -> String {
    value.map_or_else(|| "-".to_string(), |value| format!("{value:.digits$}"))
}

fn write_comparison(
    out: &mut dyn Write,
    comparison: &Comparison,
    format: ListingFormat,
) -> std::io::Result<()> {
    match format {
        ListingFormat::Json => {
            serde_json::to_writer_pretty(&mut *out, comparison)?;
            writeln!(out)
        }
        ListingFormat::Tsv => {
            writeln!(
                out,
                "new_id\told_id\tdistance\tmatched\tprevalence_before\tprevalence_after\twords_gained\twords_lost"
            )?;
            for row in &comparison.topics {
                writeln!(
                    out,
                    "{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}",
                    row.new_id,
                    row.old_id.map_or_else(String::new, |id| id.to_string()),
                    row.distance.map_or_else(String::new, |d| format!("{d:.6}")),
                    row.matched,
                    row.prevalence_before
                        .map_or_else(String::new, |p| format!("{p:.6}")),
                    format_args!("{:.6}", row.prevalence_after),
                    row.words_gained.join(" "),
                    row.words_lost.join(" ")
                )?;
            }
            Ok(())
        }
        ListingFormat::Table => {
            writeln!(
                out,
                "{:>6}  {:>6}  {:>8}  {:>15}  top words (+ gained, - lost)",
                "new id", "old id", "distance", "prevalence"
            )?;
            for row in &comparison.topics {
                let prevalence = format!(
                    "{} -> {:.1}%",
                    row.prevalence_before
                        .map_or_else(|| "new".to_string(), |p| format!("{:.1}%", 100.0 * p)),
                    100.0 * row.prevalence_after
                );
                let mut words = row
                    .top_words
                    .iter()
                    .take(5)
                    .cloned()
                    .collect::<Vec<_>>()
                    .join(", ");
                if !row.words_gained.is_empty() {
                    words.push_str(&format!("  +{}", row.words_gained.join(" +")));
                }
                if !row.words_lost.is_empty() {
                    words.push_str(&format!("  -{}", row.words_lost.join(" -")));
                }
                writeln!(
                    out,
                    "{:>6}  {:>6}  {:>8}  {:>15}  {words}",
                    row.new_id,
                    row.old_id.map_or_else(|| "-".to_string(), |id| id.to_string()),
                    optional(row.distance, 3),
                    prevalence
                )?;
            }
            writeln!(
                out,
                "{:.0}% of the new topics matched an old one (distance below {}); old topics without a successor: {}",
                100.0 * comparison.matched_share,
                comparison.threshold,
                if comparison.unmatched_old.is_empty() {
                    "none".to_string()
                } else {
                    comparison
                        .unmatched_old
                        .iter()
                        .map(u32::to_string)
                        .collect::<Vec<_>>()
                        .join(", ")
                }
            )
        }
    }
}
