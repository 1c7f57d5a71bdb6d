//! Maps a field path back to its line and column in the YAML text.
//!
//! The JSON Schema check and the semantic checks work on values without positions; the user
//! needs the line. This parses the (already accepted) text once with saphyr's marked nodes into
//! a tree of positions and walks it by path, stopping at the deepest node that exists so a
//! missing key points at its parent.

use std::sync::Arc;

use saphyr::{LoadableYamlNode, MarkedYaml, YamlData};

use super::diagnostic::{FieldPath, Segment};

/// Positions of the nodes of one YAML document, parsed once and then queried for every
/// diagnostic (the tree holds positions and key names only, not the values).
#[derive(Debug, Clone)]
pub struct Locator {
    root: Option<Arc<Node>>,
}

/// A node: where it starts and ends (1-based line and column) and its children.
#[derive(Debug)]
struct Node {
    start: (usize, usize),
    end: (usize, usize),
    children: Children,
}

#[derive(Debug)]
enum Children {
    /// A scalar; its text when it is a string (a mapping key is matched by it).
    Scalar(Option<String>),
    Mapping(Vec<(Node, Node)>),
    Sequence(Vec<Node>),
}

impl Node {
    fn from_marked(node: &MarkedYaml<'_>) -> Self {
        let children = match &node.data {
            YamlData::Mapping(map) => Children::Mapping(
                map.iter()
                    .map(|(k, v)| (Node::from_marked(k), Node::from_marked(v)))
                    .collect(),
            ),
            YamlData::Sequence(items) => {
                Children::Sequence(items.iter().map(Node::from_marked).collect())
            }
            other => Children::Scalar(other.as_str().map(str::to_string)),
        };
        Node {
            start: (node.span.start.line(), node.span.start.col() + 1),
            end: (node.span.end.line(), node.span.end.col() + 1),
            children,
        }
    }

    fn key_text(&self) -> Option<&str> {
        match &self.children {
            Children::Scalar(text) => text.as_deref(),
            _ => None,
        }
    }

    fn is_collection(&self) -> bool {
        !matches!(self.children, Children::Scalar(_))
    }
}

impl Locator {
    /// Parses `text`; a text that does not parse yields a locator that knows no positions.
    pub fn new(text: &str) -> Self {
        let root = MarkedYaml::load_from_str(text)
            .ok()
            .and_then(|docs| docs.first().map(Node::from_marked))
            .map(Arc::new);
        Self { root }
    }

    /// 1-based (line, column) of the value at `path`, or of its deepest existing ancestor.
    pub fn value(&self, path: &[Segment]) -> Option<(usize, usize)> {
        let mut node = self.root.as_deref()?;
        for segment in path {
            match child(node, segment) {
                Some((_, value)) => node = value,
                None => break,
            }
        }
        Some(node.start)
    }

    /// 1-based (line, column) of the key `key` in the mapping at `path` (for unknown fields).
    pub fn key(&self, path: &[Segment], key: &str) -> Option<(usize, usize)> {
        let mut node = self.root.as_deref()?;
        for segment in path {
            node = child(node, segment)?.1;
        }
        match &node.children {
            Children::Mapping(map) => map
                .iter()
                .find(|(k, _)| k.key_text() == Some(key))
                .map(|(k, _)| k.start)
                .or(Some(node.start)),
            _ => Some(node.start),
        }
    }

    /// The field path of the node that starts at 1-based (line, column), or of the innermost
    /// collection containing it; for turning a parser position back into a field name.
    pub fn path_at(&self, line: usize, column: usize) -> Option<FieldPath> {
        let mut node = self.root.as_deref()?;
        let mut path = Vec::new();
        let target = (line, column);
        'descend: loop {
            match &node.children {
                Children::Mapping(map) => {
                    for (k, v) in map {
                        if k.start == target || v.start == target || contains(v, target) {
                            let Some(key) = k.key_text() else {
                                break 'descend;
                            };
                            path.push(Segment::Key(key.to_string()));
                            if k.start == target || v.start == target {
                                break 'descend;
                            }
                            node = v;
                            continue 'descend;
                        }
                    }
                    break;
                }
                Children::Sequence(items) => {
                    for (i, v) in items.iter().enumerate() {
                        if v.start == target || contains(v, target) {
                            path.push(Segment::Index(i));
                            if v.start == target {
                                break 'descend;
                            }
                            node = v;
                            continue 'descend;
                        }
                    }
                    break;
                }
                Children::Scalar(_) => break,
            }
        }
        Some(FieldPath(path))
    }
}

fn contains(node: &Node, position: (usize, usize)) -> bool {
    node.is_collection() && node.start <= position && position < node.end
}

fn child<'n>(node: &'n Node, segment: &Segment) -> Option<(Option<&'n Node>, &'n Node)> {
    match (&node.children, segment) {
        (Children::Sequence(items), Segment::Index(i)) => items.get(*i).map(|v| (None, v)),
        (Children::Mapping(map), Segment::Key(k)) => map
            .iter()
            .find(|(key, _)| key.key_text() == Some(k.as_str()))
            .map(|(key, value)| (Some(key), value)),
        (Children::Mapping(map), Segment::Index(i)) => {
            // A numeric mapping key that the pointer parsed as an index.
            let text = i.to_string();
            map.iter()
                .find(|(key, _)| key.key_text() == Some(text.as_str()))
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
