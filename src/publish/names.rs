//! Topic names that editors keep by hand in `ROOT/names.toml`, one line per
//! topic id: `7 = "harbour works"`. Because ids persist, a name follows its
//! topic from run to run. A run never rewrites what an editor wrote: it only
//! appends commented suggestions for new topics (their top words), which an
//! editor can uncomment.

use std::collections::BTreeMap;
use std::path::Path;

use super::PublishError;
use crate::model::format::write_atomic;

/// The names of a run root, by topic id.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct TopicNames {
    names: BTreeMap<u32, String>,
}

impl TopicNames {
    /// The name of topic `id`, if an editor gave one.
    pub fn get(&self, id: u32) -> Option<&str> {
        self.names.get(&id).map(String::as_str)
    }

    /// Number of named topics.
    pub fn len(&self) -> usize {
        self.names.len()
    }

    /// True when no topic is named.
    pub fn is_empty(&self) -> bool {
        self.names.is_empty()
    }

    /// Parses a names file's text; errors name the line.
    pub fn parse(text: &str, path: &Path) -> Result<TopicNames, PublishError> {
        let damaged = |line: usize, detail: String| PublishError::Names {
            path: path.to_path_buf(),
            line,
            detail,
        };
        let table: toml::Table = toml::from_str(text).map_err(|err| {
            let line = err.span().map_or(1, |span| {
                text[..span.start.min(text.len())].matches('\n').count() + 1
            });
            damaged(line, err.message().trim().to_string())
        })?;
        let line_of = |key: &str| {
            text.lines()
                .position(|line| line.trim_start().starts_with(key))
                .map_or(1, |index| index + 1)
        };
        let mut names = BTreeMap::new();
        for (key, value) in table {
            let id: u32 = key.trim_matches('"').parse().map_err(|_| {
                damaged(
                    line_of(&key),
                    format!("`{key}` is not a topic id (a whole number)"),
                )
            })?;
            let toml::Value::String(name) = value else {
                return Err(damaged(
                    line_of(&key),
                    format!("the name of topic {id} must be a string in quotes"),
                ));
            };
            names.insert(id, name);
        }
        Ok(TopicNames { names })
    }

    /// Reads the names file; a missing file means no names.
    pub fn load(path: &Path) -> Result<TopicNames, PublishError> {
        match std::fs::read_to_string(path) {
            Ok(text) => TopicNames::parse(&text, path),
            Err(err) if err.kind() == std::io::ErrorKind::NotFound => Ok(TopicNames::default()),
            Err(err) if err.kind() == std::io::ErrorKind::InvalidData => Err(PublishError::Names {
                path: path.to_path_buf(),
                line: 1,
                detail: "the file is not valid UTF-8".to_string(),
            }),
            Err(source) => Err(PublishError::Io {
                path: path.to_path_buf(),
                source,
            }),
        }
    }
}

/// The names for the model folder `dir`: those of its run root when it is a
/// run folder of one, else none. A names file that does not parse is an
/// error for the caller to report (and go on without names).
pub fn names_for_model_dir(dir: &Path) -> Result<TopicNames, PublishError> {
    match super::root::root_of_run_dir(dir) {
        Some(root) => TopicNames::load(&root.names()),
        None => Ok(TopicNames::default()),
    }
}

/// Appends, as comments, a suggested name for each topic id in
/// `suggestions` that has neither a name nor a suggestion in the file yet;
/// the editor's text is kept byte for byte in front. Returns how many were
/// added. The file is replaced atomically.
pub fn append_suggestions(
    path: &Path,
    suggestions: &[(u32, String)],
    note: &str,
) -> Result<usize, PublishError> {
    let text = match std::fs::read_to_string(path) {
        Ok(text) => text,
        Err(err) if err.kind() == std::io::ErrorKind::NotFound => String::new(),
        Err(source) => {
            return Err(PublishError::Io {
                path: path.to_path_buf(),
                source,
            });
        }
    };
    let names = TopicNames::parse(&text, path)?;
    let suggested = |id: u32| {
        let prefix = format!("# {id} =");
        text.lines().any(|line| line.trim_start().starts_with(&prefix))
    };
    let mut added = String::new();
    let mut count = 0;
    for (id, words) in suggestions {
        if names.get(*id).is_some() || suggested(*id) {
            continue;
        }
        let quoted = toml::Value::String(words.clone()).to_string();
        added.push_str(&format!("# {id} = {quoted}\n"));
        count += 1;
    }
    if count == 0 {
        return Ok(0);
    }
    let mut out = text;
    if out.is_empty() {
        out.push_str("# Topic names, one per line: ID = \"name\". themata reads this file and never\n");
        out.push_str("# rewrites a line of it; it appends suggestions for new topics as comments.\n");
    } else if !out.ends_with('\n') {
        out.push('\n');
    }
    out.push_str(&format!("# suggested by {note} (top words of new topics):\n"));
    out.push_str(&added);
    write_atomic(path, out.as_bytes())?;
    Ok(count)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_parse_by_id_and_errors_name_the_line() {
        // Source: TOML 1.0 (bare keys may be digits; basic strings in quotes).
        let path = Path::new("names.toml");
        let names = TopicNames::parse(
            "# editors' names\n7 = \"harbour works\"\n12 = \"school fête\"\n",
            path,
        )
        .unwrap();
        assert_eq!(names.get(7), Some("harbour works"));
        assert_eq!(names.get(12), Some("school fête"));
        assert_eq!(names.get(3), None);
        let err = TopicNames::parse("7 = \"ok\"\n8 = unquoted words\n", path)
            .unwrap_err()
            .to_string();
        assert!(err.contains("names.toml:2:"), "{err}");
        let err = TopicNames::parse("7 = \"ok\"\nharbour = \"x\"\n", path)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("names.toml:2:") && err.contains("not a topic id"),
            "{err}"
        );
        let err = TopicNames::parse("9 = 3\n", path).unwrap_err().to_string();
        assert!(err.contains("must be a string"), "{err}");
    }

    #[test]
    fn suggestions_are_appended_without_touching_the_editors_lines() {
        // Source: common practice — a tool must not rewrite a file people edit.
        let folder = tempfile::tempdir().unwrap();
        let path = folder.path().join("names.toml");
        let edited = "# mine\n7 = \"harbour works\"   # kept as typed\n";
        std::fs::write(&path, edited).unwrap();
        let suggestions = vec![(7, "quay, tide".to_string()), (9, "bus, \"route\"".to_string())];
        assert_eq!(append_suggestions(&path, &suggestions, "run 3").unwrap(), 1);
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(text.starts_with(edited), "{text}");
        // The suggestion is a TOML string (here a literal one, since it holds
        // double quotes), so uncommenting the line gives a valid entry.
        assert!(text.contains("# 9 = 'bus, \"route\"'"), "{text}");
        let uncommented = text.replace("# 9 =", "9 =");
        assert_eq!(
            TopicNames::parse(&uncommented, &path).unwrap().get(9),
            Some("bus, \"route\"")
        );
        // A second run suggests nothing new, and the file still parses.
        assert_eq!(append_suggestions(&path, &suggestions, "run 4").unwrap(), 0);
        assert_eq!(TopicNames::load(&path).unwrap().len(), 1);
    }
}
