//! Maps a field path back to its line and column in the YAML text.
//!
//! The JSON Schema check and the semantic checks work on values without positions; the user
//! needs the line. This re-parses the (already accepted) text with saphyr's marked nodes and walks
//! the path, stopping at the deepest node that exists so a missing key points at its parent.

use saphyr::{LoadableYamlNode, MarkedYaml, YamlData};

use super::diagnostic::{FieldPath, Segment};

/// Positions of the nodes of one YAML document.
pub struct Locator<'a> {
    root: Option<MarkedYaml<'a>>,
}

impl<'a> Locator<'a> {
    /// Parses `text`; a text that does not parse yields a locator that knows no positions.
    pub fn new(text: &'a str) -> Self {
        let root = MarkedYaml::load_from_str(text)
            .ok()
            .and_then(|docs| docs.into_iter().next());
        Self { root }
    }

    /// 1-based (line, column) of the value at `path`, or of its deepest existing ancestor.
    pub fn value(&self, path: &[Segment]) -> Option<(usize, usize)> {
        let mut node = self.root.as_ref()?;
        for segment in path {
            match child(node, segment) {
                Some((_, value)) => node = value,
                None => break,
            }
        }
        Some(position(node))
    }

    /// 1-based (line, column) of the key `key` in the mapping at `path` (for unknown fields).
    pub fn key(&self, path: &[Segment], key: &str) -> Option<(usize, usize)> {
        let mut node = self.root.as_ref()?;
        for segment in path {
            node = child(node, segment)?.1;
        }
        match &node.data {
            YamlData::Mapping(map) => map
                .iter()
                .find(|(k, _)| k.data.as_str() == Some(key))
                .map(|(k, _)| position(k))
                .or_else(|| Some(position(node))),
            _ => Some(position(node)),
        }
    }
}

impl Locator<'_> {
    /// The field path of the node that starts at 1-based (line, column), or of the innermost
    /// collection containing it; for turning a parser position back into a field name.
    pub fn path_at(&self, line: usize, column: usize) -> Option<FieldPath> {
        let mut node = self.root.as_ref()?;
        let mut path = Vec::new();
        let target = (line, column);
        'descend: loop {
            match &node.data {
                YamlData::Mapping(map) => {
                    for (k, v) in map.iter() {
                        let key = k.data.as_str().map(str::to_string);
                        if position(k) == target || position(v) == target || contains(v, target) {
                            let Some(key) = key else { break 'descend };
                            path.push(Segment::Key(key));
                            if position(k) == target || position(v) == target {
                                break 'descend;
                            }
                            node = v;
                            continue 'descend;
                        }
                    }
                    break;
                }
                YamlData::Sequence(items) => {
                    for (i, v) in items.iter().enumerate() {
                        if position(v) == target || contains(v, target) {
                            path.push(Segment::Index(i));
                            if position(v) == target {
                                break 'descend;
                            }
                            node = v;
                            continue 'descend;
                        }
                    }
                    break;
                }
                _ => break,
            }
        }
        Some(FieldPath(path))
    }
}

fn contains(node: &MarkedYaml<'_>, (line, column): (usize, usize)) -> bool {
    let start = position(node);
    let end = (node.span.end.line(), node.span.end.col() + 1);
    matches!(node.data, YamlData::Mapping(_) | YamlData::Sequence(_))
        && start <= (line, column)
        && (line, column) < end
}

fn position(node: &MarkedYaml<'_>) -> (usize, usize) {
    (node.span.start.line(), node.span.start.col() + 1)
}

fn child<'n, 'a>(
    node: &'n MarkedYaml<'a>,
    segment: &Segment,
) -> Option<(Option<&'n MarkedYaml<'a>>, &'n MarkedYaml<'a>)> {
    match (&node.data, segment) {
        (YamlData::Sequence(items), Segment::Index(i)) => items.get(*i).map(|v| (None, v)),
        (YamlData::Mapping(map), Segment::Key(k)) => map
            .iter()
            .find(|(key, _)| key.data.as_str() == Some(k.as_str()))
            .map(|(key, value)| (Some(key), value)),
        (YamlData::Mapping(map), Segment::Index(i)) => {
            // A numeric mapping key that the pointer parsed as an index.
            let text = i.to_string();
            map.iter()
                .find(|(key, _)| key.data.as_str() == Some(text.as_str()))
                .map(|(key, value)| (Some(key), value))
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "schema: 1\nfactors:\n  - id: temp\n    delta: -3\n  - id: ph\n";

    #[test]
    fn value_position_is_found_through_keys_and_indices() {
        let loc = Locator::new(TEXT);
        let path = [
            Segment::Key("factors".into()),
            Segment::Index(0),
            Segment::Key("delta".into()),
        ];
        assert_eq!(loc.value(&path), Some((4, 12)));
    }

    #[test]
    fn missing_key_points_at_its_parent() {
        let loc = Locator::new(TEXT);
        let path = [
            Segment::Key("factors".into()),
            Segment::Index(1),
            Segment::Key("name".into()),
        ];
        assert_eq!(loc.value(&path), Some((5, 5)));
    }

    #[test]
    fn a_position_maps_back_to_its_field_path() {
        let loc = Locator::new(TEXT);
        assert_eq!(loc.path_at(4, 12).unwrap().to_string(), "factors[0].delta");
        assert_eq!(loc.path_at(5, 9).unwrap().to_string(), "factors[1].id");
    }

    #[test]
    fn key_position_points_at_the_key_itself() {
        let loc = Locator::new(TEXT);
        let path = [Segment::Key("factors".into()), Segment::Index(0)];
        assert_eq!(loc.key(&path, "delta"), Some((4, 5)));
    }
}
