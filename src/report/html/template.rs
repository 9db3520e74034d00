//! The page: maud templates over [`Facts`], the charts embedded as SVG, the
//! topic map as SVG written here (its circles are links, which plotters
//! cannot draw), the stylesheet and the browser script inline. maud escapes
//! every value it inserts; the only raw insertions are the stylesheet and
//! script (constants of this crate), the charts (plotters escapes their
//! text) and the document table as JSON in which `<`, `>` and `&` are
//! written as `\u003c`, `\u003e` and `\u0026`, so no text in it can end
//! the script element.

use maud::{DOCTYPE, Markup, PreEscaped, html};
use plotters::style::Color;

use super::ReportError;
use super::charts::{self, TraceLine};
use super::facts::{COHERENCE_WORDS, Facts, TopicFact};
use super::palette;

const STYLE: &str = include_str!("assets/report.css");
const SCRIPT: &str = include_str!("assets/browser.js");

/// Labels offered in a list in the document browser; more get a text box.
const LABEL_CHOICES: usize = 300;

/// The width and height of the topic map, in SVG units.
const MAP: (f64, f64) = (1000.0, 560.0);

/// A share as a percentage: one decimal, two below 1%.
pub fn percent(share: f64) -> String {
    let value = 100.0 * share;
    // Below 0.995% the one-decimal form would round to 1.0% or less.
    if value.abs() < 0.995 {
        format!("{value:.2}%")
    } else {
        format!("{value:.1}%")
    }
}

/// A whole number with thin groups: 1 234 567.
pub fn whole(value: usize) -> String {
    let digits = value.to_string();
    let mut out = String::new();
    for (position, digit) in digits.chars().enumerate() {
        if position > 0 && (digits.len() - position).is_multiple_of(3) {
            out.push('\u{202f}');
        }
        out.push(digit);
    }
    out
}

/// A figure to a few significant digits.
fn figure(value: f64) -> String {
    let size = value.abs();
    if size >= 1000.0 {
        format!("{value:.0}")
    } else if size >= 10.0 {
        format!("{value:.1}")
    } else if size >= 0.01 {
        format!("{value:.3}")
    } else {
        format!("{value:.2e}")
    }
}

/// The document table as JSON that is safe inside a script element.
pub fn script_json(value: &serde_json::Value) -> String {
    let text = value.to_string();
    let mut out = String::with_capacity(text.len() + text.len() / 16);
    for character in text.chars() {
        match character {
            '<' => out.push_str("\\u003c"),
            '>' => out.push_str("\\u003e"),
            '&' => out.push_str("\\u0026"),
            '\u{2028}' => out.push_str("\\u2028"),
            '\u{2029}' => out.push_str("\\u2029"),
            other => out.push(other),
        }
    }
    out
}

fn tile(what: &str, number: String, note: Markup, flagged: bool) -> Markup {
    html! {
        div.tile.flag[flagged] {
            span.what { (what) }
            span.num { (number) }
            span.note { (note) }
        }
    }
}

fn overview(facts: &Facts) -> Markup {
    let o = &facts.overview;
    let priors = &o.priors;
    let convergence = &o.convergence;
    html! {
        section #overview {
            h2 { "Overview" }
            p.lede {
                "What was modelled and how well the model fits. Each topic is a distribution over words; each document a mixture of topics. Figures are averages over "
                (o.samples) " posterior sample" @if o.samples != 1 { "s" } "; intervals are "
                (format!("{:.0}", 100.0 * o.level)) "% credible intervals."
            }
            div.tiles {
                (tile("Documents", whole(o.documents), html! {
                    @if let Some(build) = &o.build {
                        (whole(build.documents_read)) " read, " (whole(build.documents_kept)) " kept"
                    } @else { "in the model" }
                }, false))
                @if let Some(build) = &o.build {
                    (tile("Skipped documents", whole(build.skipped()), html! {
                        @if build.skipped_by_reason.is_empty() { "none skipped while reading" }
                        @else {
                            @for (position, (reason, count)) in build.skipped_by_reason.iter().enumerate() {
                                @if position > 0 { ", " }
                                (reason.replace('_', " ")) ": " (whole(*count))
                            }
                        }
                    }, build.skipped() > 0))
                } @else {
                    (tile("Skipped documents", "—".into(), html! { "not recorded for this folder" }, false))
                }
                (tile("Words", whole(o.tokens), html! { (whole(o.vocabulary)) " distinct in the vocabulary" }, false))
                (tile("Topics", whole(o.topics), html! { (o.sampler) " sampler, " (o.iterations) " sweeps, seed " (o.seed) }, false))
                (tile("Held-out perplexity", o.heldout_perplexity.map_or("—".into(), figure), html! {
                    @if o.heldout_perplexity.is_some() { "on documents kept out of training; lower is better" }
                    @else { "not measured (fit with a held-out share to measure it)" }
                }, false))
                (tile("Coherence", o.mean_npmi.map_or("—".into(), |v| format!("{v:.3}")), html! {
                    "mean NPMI of each topic's " (COHERENCE_WORDS) " heaviest words (−1 to 1, higher is better)"
                }, false))
                (tile("Alpha (topics per document)", figure(priors.alpha_sum), html! {
                    @if priors.alpha_learned { "learned from the data" } @else { "fixed" }
                    "; sum over topics, from " (figure(priors.alpha_min)) " to " (figure(priors.alpha_max)) " each"
                }, false))
                (tile("Beta (words per topic)", figure(priors.beta_low), html! {
                    @if priors.beta_learned { "learned from the data" } @else { "fixed" }
                    @if priors.beta_high > priors.beta_low { "; per word, up to " (figure(priors.beta_high)) }
                    @else { ", the same for every word" }
                }, false))
                (tile("Convergence", if convergence.converged { "levelled off".into() } else { "still moving".into() }, html! {
                    @match convergence.relative_change {
                        Some(change) => { "log-likelihood changed " (format!("{:.1e}", change)) " between the halves of the trace after burn-in (threshold " (format!("{:.0e}", convergence.threshold)) ")" }
                        None => { "too few trace points after burn-in to judge" }
                    }
                }, !convergence.converged))
            }
        }
    }
}

/// Width of a map label of `text`, estimated (12px sans-serif).
fn label_width(text: &str) -> f64 {
    6.8 * text.chars().count() as f64
}

/// Places each label beside its circle where it overlaps no label placed
/// before it (larger topics first) and no other circle: right, left, below
/// or above, else right.
/// Returns `(x, y, anchor)` per topic, in the order given.
fn place_labels(circles: &[(f64, f64, f64, String)], bounds: (f64, f64)) -> Vec<(f64, f64, &'static str)> {
    let mut taken: Vec<(f64, f64, f64, f64)> = Vec::new();
    let discs: Vec<(f64, f64, f64, f64)> = circles
        .iter()
        .map(|&(x, y, r, _)| (x - r, y - r, x + r, y + r))
        .collect();
    circles
        .iter()
        .enumerate()
        .map(|(own, (x, y, r, text))| {
            let width = label_width(text);
            let candidates = [
                (x + r + 4.0, *y, "start", x + r + 4.0),
                (x - r - 4.0, *y, "end", x - r - 4.0 - width),
                (*x, y + r + 11.0, "middle", x - width / 2.0),
                (*x, y - r - 9.0, "middle", x - width / 2.0),
            ];
            let boxed = |&(_, ty, _, left): &(f64, f64, &str, f64)| (left, ty - 8.0, left + width, ty + 8.0);
            let free = |candidate: &(f64, f64, &str, f64)| {
                let (l, t, rr, b) = boxed(candidate);
                l >= 0.0
                    && rr <= bounds.0
                    && t >= 0.0
                    && b <= bounds.1
                    && taken
                        .iter()
                        .chain(
                            discs
                                .iter()
                                .enumerate()
                                .filter(|&(other, _)| other != own)
                                .map(|(_, disc)| disc),
                        )
                        .all(|&(l2, t2, r2, b2)| rr <= l2 || r2 <= l || b <= t2 || b2 <= t)
            };
            let chosen = candidates.iter().find(|c| free(c)).unwrap_or(&candidates[0]);
            taken.push(boxed(chosen));
            (chosen.0, chosen.1, chosen.2)
        })
        .collect()
}

/// The topic map: circles placed by classical scaling of the topics'
/// Jensen-Shannon distances, area proportional to prevalence, each a link
/// to its card.
fn topic_map(topics: &[TopicFact]) -> Markup {
    let (width, height) = MAP;
    let pad = 60.0;
    let (mut x_low, mut x_high, mut y_low, mut y_high) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
    for topic in topics {
        x_low = x_low.min(topic.position.0);
        x_high = x_high.max(topic.position.0);
        y_low = y_low.min(topic.position.1);
        y_high = y_high.max(topic.position.1);
    }
    let span = ((x_high - x_low) / (width - 2.0 * pad)).max((y_high - y_low) / (height - 2.0 * pad));
    let scale = if span > 0.0 { 1.0 / span } else { 1.0 };
    let centre = ((x_low + x_high) / 2.0, (y_low + y_high) / 2.0);
    let place = |(x, y): (f64, f64)| {
        (
            width / 2.0 + (x - centre.0) * scale,
            height / 2.0 - (y - centre.1) * scale,
        )
    };
    let largest = topics.iter().map(|t| t.prevalence).fold(0.0, f64::max).max(1e-12);
    let biggest_radius = (180.0 / (topics.len().max(1) as f64).sqrt()).clamp(8.0, 46.0);
    let radius = |share: f64| (biggest_radius * (share / largest).sqrt()).max(4.0);
    // Names beside the circles while they fit; ids inside them always.
    let named = topics.len() <= 60;
    // Large circles first, so small ones stay on top and clickable.
    let mut order: Vec<&TopicFact> = topics.iter().collect();
    order.sort_by(|a, b| b.prevalence.total_cmp(&a.prevalence).then(a.index.cmp(&b.index)));
    let circles: Vec<(f64, f64, f64, String)> = order
        .iter()
        .map(|topic| {
            let (x, y) = place(topic.position);
            (x, y, radius(topic.prevalence), topic.title())
        })
        .collect();
    let labels = if named {
        place_labels(&circles, MAP)
    } else {
        Vec::new()
    };
    let origin = place((0.0, 0.0));
    html! {
        svg.topic-map #topic-map viewBox=(format!("0 0 {width} {height}")) role="img"
            aria-label="Map of the topics: near topics use similar words; circle area is the topic's share of all words" {
            line.axis x1="0" y1=(format!("{:.1}", origin.1)) x2=(width) y2=(format!("{:.1}", origin.1)) {}
            line.axis x1=(format!("{:.1}", origin.0)) y1="0" x2=(format!("{:.1}", origin.0)) y2=(height) {}
            @for (topic, (x, y, r, _)) in order.iter().zip(&circles) {
                @let colour = palette::hex(palette::topic(topic.index));
                a.map-topic href=(format!("#topic-{}", topic.id)) data-topic=(topic.id) {
                    title { "Topic " (topic.id) ": " (topic.title()) " — " (percent(topic.prevalence)) " of words" }
                    circle cx=(format!("{x:.1}")) cy=(format!("{y:.1}")) r=(format!("{r:.1}"))
                        fill=(colour) fill-opacity="0.6" stroke=(colour) stroke-width="1.5" {}
                    @if *r >= 9.0 {
                        text.map-id x=(format!("{x:.1}")) y=(format!("{y:.1}")) text-anchor="middle" dominant-baseline="central" { (topic.id) }
                    }
                }
            }
            g.map-names {
                @for ((_, _, _, text), (x, y, anchor)) in circles.iter().zip(&labels) {
                    text.map-name x=(format!("{x:.1}")) y=(format!("{y:.1}")) text-anchor=(anchor) dominant-baseline="central" { (text) }
                }
            }
        }
    }
}

fn topic_card(topic: &TopicFact, level: f64, dated: bool) -> Result<Markup, ReportError> {
    let colour = palette::topic(topic.index);
    let scale = topic
        .words
        .iter()
        .map(|w| w.high.max(w.weight))
        .fold(0.0, f64::max)
        .max(1e-12);
    let spark = if dated && topic.over_time.len() > 1 {
        Some(charts::spark_line(&topic.over_time, palette::rgb(colour))?)
    } else {
        None
    };
    let level_text = format!("{:.0}%", 100.0 * level);
    Ok(html! {
        article.card id=(format!("topic-{}", topic.id)) style=(format!("--topic: {}", palette::hex(colour))) data-topic=(topic.id) {
            header {
                span.badge title="topic id" { (topic.id) }
                h3 {
                    (topic.title())
                    @if topic.name.is_some() { span.given { "name given by the editors" } }
                }
            }
            dl.figures {
                div { dt { "share of all words" } dd { (percent(topic.prevalence)) } }
                div { dt { "leading topic of" } dd { (whole(topic.leading_documents)) " documents" } }
                div { dt { "NPMI" } dd { (topic.npmi.map_or("—".into(), |v| format!("{v:.3}"))) } }
            }
            h4 { "Heaviest words, with " (level_text) " intervals" }
            ol.words {
                @for word in &topic.words {
                    li {
                        span.w title=(word.word) { (word.word) }
                        span.bar {
                            span.fill style=(format!("width: {:.1}%", 100.0 * word.weight / scale)) {}
                            span.ci style=(format!("left: {:.1}%; width: {:.1}%", 100.0 * word.low / scale, 100.0 * (word.high - word.low) / scale)) {}
                        }
                        span.v { (percent(word.weight)) }
                    }
                }
            }
            @if let Some(spark) = &spark {
                h4 { "Share over time" }
                div.spark { (PreEscaped(spark)) }
            }
            h4 { "Documents that show it most" }
            ul.docs {
                @for document in &topic.documents {
                    li {
                        div.doc-head {
                            code { (document.id) }
                            @if let Some(label) = &document.label { span.tag { (label) } }
                            @if let Some(date) = &document.date { span.tag { (date) } }
                            span.share title=(format!("{level_text} credible interval")) {
                                (percent(document.share)) " " small { "(" (percent(document.low)) "–" (percent(document.high)) ")" }
                            }
                        }
                        p.snippet { (document.snippet) @if document.truncated { " …" } }
                    }
                }
            }
            @if let Some(drift) = &topic.drift {
                h4 { "Since the previous run" @if let Some(run) = &drift.previous_run { " (" (run) ")" } }
                p.drift {
                    @match (drift.predecessor, drift.distance) {
                        (Some(_), Some(distance)) => {
                            "Carried over (Jensen-Shannon distance " (format!("{distance:.2}")) "). "
                            @if let Some(before) = drift.prevalence_before { "Share " (percent(before)) " → " (percent(topic.prevalence)) ". " }
                        }
                        _ => { "New in this run: no earlier topic was close enough. " }
                    }
                    @if !drift.words_gained.is_empty() { span.gained { "Gained: " (drift.words_gained.join(", ")) ". " } }
                    @if !drift.words_lost.is_empty() { span.lost { "Lost: " (drift.words_lost.join(", ")) "." } }
                }
            }
        }
    })
}

fn time_section(facts: &Facts, order: &[&TopicFact]) -> Result<Markup, ReportError> {
    let dates = &facts.dates;
    let charts = match &facts.time {
        Some(time) => {
            let rows: Vec<(String, Vec<f64>)> = order
                .iter()
                .map(|topic| (format!("{} {}", topic.id, topic.title()), topic.over_time.clone()))
                .collect();
            Some((
                charts::period_bars(&time.periods, &time.documents)?,
                charts::period_grid(&time.periods, &rows)?,
                time,
            ))
        }
        None => None,
    };
    Ok(html! {
        section #time {
            h2 { "Over time" }
            @match &charts {
                Some((_, _, time)) => {
                    p.lede {
                        (whole(dates.placed)) " documents are placed by their date, one period per " (time.step) ". "
                        "A topic's share of a period is its share of the words of that period's documents."
                    }
                }
                None => {
                    p.lede { "No document has a readable date, so there is nothing to show over time (documents take their date from the input's date field, in ISO 8601 form such as 2024-03-01)." }
                }
            }
            @if dates.missing > 0 || dates.unreadable > 0 {
                p.lede {
                    "Not on the time axis: " (whole(dates.missing)) " without a date, " (whole(dates.unreadable)) " with a date that is not ISO 8601"
                    @if let Some((document, text)) = &dates.example { " (such as " code { (text) } " in " code { (document) } ")" }
                    ". They are counted everywhere else."
                }
            }
            @if let Some((bars, grid, _)) = &charts {
                figure.panel { (PreEscaped(bars)) figcaption { "Documents per period." } }
                figure.panel { (PreEscaped(grid)) figcaption { "Each topic's share per period, shaded against that topic's own largest share (darkest = its peak). Topics in the order of the cards." } }
            }
        }
    })
}

fn label_section(facts: &Facts, order: &[&TopicFact]) -> Markup {
    html! {
        section #labels {
            h2 { "By label" }
            @match &facts.labels {
                None => { p.lede { "No document carries a label." } }
                Some(labels) => {
                    p.lede {
                        "Each column is a label; each cell the topic's share of the words of that label's documents. "
                        (whole(labels.distinct)) " distinct labels"
                        @if labels.unlabelled > 0 { ", " (whole(labels.unlabelled)) " documents without one" }
                        ". Labels are metadata: the model never saw them."
                    }
                    @let largest = labels.shares.iter().flatten().copied().fold(0.0, f64::max).max(1e-12);
                    div.scroll {
                        table.label-table {
                            thead {
                                tr {
                                    th { "topic" }
                                    @for (column, count) in labels.columns.iter().zip(&labels.documents) {
                                        th.n title=(format!("{count} documents")) { (column) }
                                    }
                                }
                            }
                            tbody {
                                @for topic in order {
                                    tr {
                                        td.topic-cell {
                                            span.dot style=(format!("background: {}", palette::hex(palette::topic(topic.index)))) {}
                                            a href=(format!("#topic-{}", topic.id)) { (topic.id) " " (topic.title()) }
                                        }
                                        @for share in &labels.shares[topic.index] {
                                            td.n style=(format!("background: rgba(15, 118, 110, {:.3})", 0.55 * share / largest)) { (percent(*share)) }
                                        }
                                    }
                                }
                            }
                        }
                    }
                }
            }
        }
    }
}

fn fit_section(facts: &Facts) -> Result<Markup, ReportError> {
    let traces = &facts.traces;
    let accent = palette::rgb(palette::ACCENT).to_rgba();
    let burn_in = Some(traces.burn_in as f64);
    let line = |points, colour, width| TraceLine {
        points,
        colour,
        width,
    };
    let points = |values: &[(u64, f64)]| values.iter().map(|&(x, y)| (x as f64, y)).collect::<Vec<_>>();
    let likelihood = if traces.log_likelihood.is_empty() {
        None
    } else {
        Some(charts::trace_chart(
            &[line(points(&traces.log_likelihood), accent, 2)],
            "log-likelihood",
            burn_in,
        )?)
    };
    let settled: Vec<(f64, f64)> = traces
        .log_likelihood
        .iter()
        .filter(|(sweep, _)| *sweep > traces.burn_in)
        .map(|&(x, y)| (x as f64, y))
        .collect();
    let zoomed = if settled.len() > 1 {
        Some(charts::trace_chart(
            &[line(settled, accent, 2)],
            "log-likelihood",
            None,
        )?)
    } else {
        None
    };
    let alpha = match &traces.alpha {
        Some(trace) if trace.len() > 1 => {
            let n_topics = trace.first().map_or(0, |(_, alpha)| alpha.len());
            let lines: Vec<_> = (0..n_topics)
                .map(|topic| {
                    let line: Vec<(f64, f64)> =
                        trace.iter().map(|(x, alpha)| (*x as f64, alpha[topic])).collect();
                    TraceLine {
                        points: line,
                        colour: palette::rgb(palette::topic(topic)).mix(0.8),
                        width: 1,
                    }
                })
                .collect();
            Some(charts::trace_chart(&lines, "alpha of each topic", burn_in)?)
        }
        _ => None,
    };
    let beta = match &traces.beta {
        Some(trace) if trace.len() > 1 => Some(charts::trace_chart(
            &[line(points(trace), accent, 2)],
            "beta",
            burn_in,
        )?),
        _ => None,
    };
    Ok(html! {
        section #fit {
            h2 { "How the fit went" }
            p.lede { "The log-likelihood of the words and their topics, sweep by sweep: it should climb and then level off. Samples are taken only after burn-in." }
            @if let Some(chart) = &likelihood { figure.panel { (PreEscaped(chart)) figcaption { "Log-likelihood by sweep." } } }
            @else { p.lede { "No trace was recorded." } }
            @if let Some(chart) = &zoomed { figure.panel { (PreEscaped(chart)) figcaption { "The same after burn-in, on its own scale: a level band means the chain has settled." } } }
            @if let Some(chart) = &alpha { figure.panel { (PreEscaped(chart)) figcaption { "Alpha by sweep, one line per topic (learned from the data after burn-in)." } } }
            @if let Some(chart) = &beta { figure.panel { (PreEscaped(chart)) figcaption { "Beta by sweep (learned from the data after burn-in)." } } }
        }
    })
}

fn browser_section(facts: &Facts, order: &[&TopicFact]) -> Markup {
    let table = &facts.documents;
    html! {
        section #documents {
            h2 { "Documents" span.count { (whole(table.rows.len())) } }
            p.lede { "Every document with its two largest topics. Filter by id, label or leading topic; the table shows 50 at a time." }
            div.browser-controls {
                label { "id contains" input #filter-id type="search" autocomplete="off"; }
                @if !table.labels.is_empty() {
                    @if table.labels.len() <= LABEL_CHOICES {
                        label { "label" select #filter-label {
                            option value="" { "any label" }
                            @for label in &table.labels { option value=(label) { (label) } }
                        } }
                    } @else {
                        label { "label contains" input #filter-label type="search" autocomplete="off"; }
                    }
                }
                label { "leading topic" select #filter-topic {
                    option value="" { "any topic" }
                    @for topic in order { option value=(topic.index) { (topic.id) " " (topic.title()) } }
                } }
            }
            div.pager {
                button #page-previous type="button" { "← previous" }
                button #page-next type="button" { "next →" }
                span #browser-status { "The document browser needs JavaScript." }
            }
            div.scroll {
                table.browser {
                    thead { tr { th { "document" } th { "label" } th { "date" } th.n { "words" } th { "leading topic" } th { "second topic" } } }
                    tbody #browser-rows {}
                }
            }
        }
    }
}

fn document_data(facts: &Facts) -> serde_json::Value {
    let topics: Vec<serde_json::Value> = facts
        .topics
        .iter()
        .map(|topic| serde_json::json!([topic.id, topic.title(), palette::hex(palette::topic(topic.index))]))
        .collect();
    let permille = |share: f64| (share * 1000.0).round() as i64;
    let rows: Vec<serde_json::Value> = facts
        .documents
        .rows
        .iter()
        .map(|row| {
            serde_json::json!([
                row.id,
                row.label.map_or(-1, |label| label as i64),
                row.date.as_deref().unwrap_or(""),
                row.tokens,
                row.top.0,
                permille(row.top.1),
                row.second.0,
                permille(row.second.1)
            ])
        })
        .collect();
    serde_json::json!({ "labels": facts.documents.labels, "topics": topics, "rows": rows })
}

/// The whole page.
pub fn page(facts: &Facts) -> Result<String, ReportError> {
    let mut order: Vec<&TopicFact> = facts.topics.iter().collect();
    order.sort_by(|a, b| b.prevalence.total_cmp(&a.prevalence).then(a.index.cmp(&b.index)));
    let dated = facts.time.is_some();
    let cards = order
        .iter()
        .map(|topic| topic_card(topic, facts.overview.level, dated))
        .collect::<Result<Vec<_>, _>>()?;
    let time = time_section(facts, &order)?;
    let fit = fit_section(facts)?;
    let o = &facts.overview;
    let root_colours = format!(
        ":root {{ --paper: {}; --ink: {}; --accent: {}; --rule-strong: {}; }}",
        palette::hex(palette::PAPER),
        palette::hex(palette::INK),
        palette::hex(palette::ACCENT),
        palette::hex(palette::RULE)
    );
    let markup = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                meta name="viewport" content="width=device-width, initial-scale=1";
                title { "Topics of " (facts.title) " — themata report" }
                style { (PreEscaped(&root_colours)) "\n" (PreEscaped(STYLE)) }
            }
            body {
                header.masthead {
                    div.wrap {
                        p.kicker { "themata · topic report" }
                        h1 { (whole(o.topics)) " topics in " (whole(o.documents)) " documents" }
                        p.sub { (facts.title) @if let Some(run) = &facts.previous_run { " · compared with the previous run " (run) } }
                    }
                }
                nav.jump {
                    div.wrap {
                        a href="#overview" { "Overview" }
                        a href="#map" { "Map" }
                        a href="#topics" { "Topics" }
                        a href="#time" { "Over time" }
                        a href="#labels" { "By label" }
                        a href="#fit" { "Fit" }
                        a href="#documents" { "Documents" }
                    }
                }
                main.wrap {
                    p.caution {
                        strong { "Read with care. " }
                        "A topic model describes a collection as a whole: its topics are patterns of words that tend to occur together, and every share here is a statistical estimate with uncertainty. "
                        "It is no basis for decisions about individual people."
                    }
                    @if !facts.warnings.is_empty() {
                        ul.warnings { @for warning in &facts.warnings { li { (warning) } } }
                    }
                    (overview(facts))
                    section #map {
                        h2 { "Topic map" }
                        p.lede {
                            "Each circle is a topic; its area is the topic's share of all words. Topics that use similar words sit close together "
                            "(classical multidimensional scaling of the Jensen-Shannon distances between their word distributions; the axes have no units). "
                            "Click a circle to open its card."
                        }
                        (topic_map(&facts.topics))
                    }
                    section #topics {
                        h2 { "Topics" span.count { "largest first" } }
                        p.lede { "For each topic: its heaviest words (bar: weight; line: credible interval), how common it is, how coherent its words are (NPMI on the training documents), and the documents in which it takes the largest share. Snippets show a document's opening words as the model reads them, without stop words and rare words." }
                        div.cards { @for card in &cards { (card) } }
                    }
                    (time)
                    (label_section(facts, &order))
                    (fit)
                    (browser_section(facts, &order))
                }
                footer {
                    div.wrap {
                        "Written by themata " (env!("CARGO_PKG_VERSION")) " from the model " (facts.title)
                        ". The page needs no network: everything it shows is in this one file."
                    }
                }
                script #document-data type="application/json" { (PreEscaped(script_json(&document_data(facts)))) }
                script { (PreEscaped(SCRIPT)) }
            }
        }
    };
    Ok(markup.into_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn json_in_a_script_element_cannot_close_it() {
        // Source: HTML Living Standard, section 4.12.1.3 (restrictions for
        // contents of script elements: no "</script" and no "<!--"); ECMA-404
        // section 9 (\u escapes in JSON strings stand for the same character).
        let value = serde_json::json!(["</script><img src=x onerror=alert(1)>", "a & b", "<!-- x"]);
        let text = script_json(&value);
        assert!(
            !text.contains('<') && !text.contains('>') && !text.contains('&'),
            "{text}"
        );
        let back: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(back, value);
    }

    #[test]
    fn a_card_shows_hostile_text_as_text() {
        // Source: HTML Living Standard, section 13.1.2.6 (in text, `<` and
        // `&` are written as character references; in attribute values, `"`
        // too).
        use super::super::facts::{DriftFact, RepresentativeDocument, WordFact};
        let hostile = "</script><img src=x onerror=alert(1)>";
        let topic = TopicFact {
            index: 0,
            id: 7,
            name: Some(format!("{hostile} \"quoted\" & named")),
            words: vec![WordFact {
                word: "<b>word</b>".into(),
                weight: 0.5,
                low: 0.4,
                high: 0.6,
            }],
            prevalence: 0.3,
            npmi: Some(0.1),
            documents: vec![RepresentativeDocument {
                id: hostile.into(),
                label: Some("<i onmouseover=x>".into()),
                date: Some("<u>".into()),
                share: 0.9,
                low: 0.8,
                high: 0.95,
                snippet: "<script>alert(2)</script>".into(),
                truncated: true,
                tokens: 40,
            }],
            leading_documents: 1,
            drift: Some(DriftFact {
                previous_run: Some("<s>run</s>".into()),
                predecessor: Some(7),
                distance: Some(0.1),
                prevalence_before: Some(0.2),
                words_gained: vec!["<em>".into()],
                words_lost: vec!["&amp;".into()],
            }),
            position: (0.0, 0.0),
            over_time: Vec::new(),
        };
        let card = topic_card(&topic, 0.9, false).unwrap().into_string();
        for raw in ["<script", "<img", "<b>", "<i ", "<u>", "<s>", "<em>"] {
            assert!(!card.contains(raw), "{raw} in {card}");
        }
        assert!(card.contains("&lt;/script&gt;&lt;img src=x onerror=alert(1)&gt;"));
        assert!(card.contains("title=\"&lt;b&gt;word&lt;/b&gt;\""));
        assert!(card.contains("&amp;amp;"));
        let map = topic_map(std::slice::from_ref(&topic)).into_string();
        assert!(!map.contains("<img") && map.contains("&lt;img"));
    }

    #[test]
    fn numbers_read_as_people_write_them() {
        // Source: common practice (ISO 80000-1 section 7.3.1: digits in groups
        // of three separated by a small space).
        assert_eq!(whole(1234567), "1\u{202f}234\u{202f}567");
        assert_eq!(whole(999), "999");
        assert_eq!(percent(0.0421), "4.2%");
        assert_eq!(percent(0.00421), "0.42%");
        assert_eq!(percent(0.009999), "1.0%");
    }
}
