//! The XML layer under the DDI reader: a streaming walk that hands over small element
//! trees.
//!
//! A DDI codebook can describe thousands of variables, and most of what it holds (study
//! description, other material) concord never reads. So the document is not turned into
//! one tree: [`walk`] streams events with quick-xml's namespace-aware reader, keeps only
//! the path of open elements, and builds a small [`Element`] tree for each part the caller
//! asks for (one `var`, one `fileDscr`), which the caller turns into the model and drops.
//!
//! Elements are matched by local name within the root's namespace, whatever prefix the file
//! uses. Every element and attribute value keeps its byte span so diagnostics point into the
//! file. A DOCTYPE that declares entities is refused: quick-xml never expands them, and an
//! entity reference it cannot resolve is an error, so no expansion bomb can go off.

use std::ops::Range;
use std::path::Path;

use quick_xml::events::{BytesStart, Event};
use quick_xml::name::ResolveResult;
use quick_xml::NsReader;

use crate::codebook::error::LoadError;

/// Namespaces of the DDI Codebook versions concord reads (and none: files in the wild come
/// without one).
pub const NAMESPACES: [&str; 3] = [
    "ddi:codebook:2_5",
    "ddi:codebook:2_6",
    "http://www.icpsr.umich.edu/DDI",
];

/// Markup nested deeper than this is refused: no codebook needs it, and it bounds memory.
const MAX_DEPTH: usize = 200;

#[derive(Debug)]
pub struct Attr {
    pub name: String,
    pub value: String,
    /// Span of the value (or of the whole tag when it cannot be told).
    pub span: Range<usize>,
}

#[derive(Debug)]
pub enum Node {
    Element(Element),
    Text(String, Range<usize>),
}

#[derive(Debug)]
pub struct Element {
    /// Local name, without prefix.
    pub name: String,
    /// Is the element in the document's DDI namespace (markup such as XHTML is not)?
    pub ddi: bool,
    pub attrs: Vec<Attr>,
    pub children: Vec<Node>,
    /// Span of the start tag.
    pub span: Range<usize>,
}

impl Element {
    pub fn attr(&self, name: &str) -> Option<&Attr> {
        self.attrs.iter().find(|a| a.name == name)
    }

    pub fn attr_value(&self, name: &str) -> Option<&str> {
        self.attr(name).map(|a| a.value.as_str())
    }

    /// DDI child elements with this local name, in document order.
    pub fn children<'a>(&'a self, name: &'a str) -> impl Iterator<Item = &'a Element> + 'a {
        self.children.iter().filter_map(move |n| match n {
            Node::Element(e) if e.ddi && e.name == name => Some(e),
            _ => None,
        })
    }

    pub fn child<'a>(&'a self, name: &'a str) -> Option<&'a Element> {
        self.children(name).next()
    }

    /// The full text of the element and everything inside it, markup ignored, with runs of
    /// whitespace collapsed to one space and the ends trimmed.
    pub fn text(&self) -> String {
        let mut raw = String::new();
        self.collect_text(&mut raw);
        raw.split_whitespace().collect::<Vec<_>>().join(" ")
    }

    fn collect_text(&self, out: &mut String) {
        for n in &self.children {
            match n {
                Node::Text(t, _) => out.push_str(t),
                Node::Element(e) => {
                    // Markup such as <emph> or <p> separates words only where the file has space.
                    if matches!(e.name.as_str(), "p" | "br" | "div" | "li") {
                        out.push(' ');
                    }
                    e.collect_text(out);
                }
            }
        }
    }

    /// Span of the element's first text, or of its start tag.
    pub fn text_span(&self) -> Range<usize> {
        self.children
            .iter()
            .find_map(|n| match n {
                Node::Text(t, span) if !t.trim().is_empty() => {
                    let lead = t.len() - t.trim_start().len();
                    let len = t.trim().len();
                    // The span covers the raw text; trim it when the raw text is as long.
                    if span.len() == t.len() {
                        Some(span.start + lead..span.start + lead + len)
                    } else {
                        Some(span.clone())
                    }
                }
                _ => None,
            })
            .unwrap_or_else(|| self.span.clone())
    }
}

/// What the walk tells the caller.
pub enum Visit<'a> {
    /// Any element's ID attribute, as soon as its start tag is read.
    Id(&'a Attr),
    /// A part the caller asked for, complete.
    Part(Element),
}

/// Stream the document, building trees for the parts whose path below the root satisfies
/// `wanted`, and report every visit to `visit`.
pub fn walk(
    path: &Path,
    text: &str,
    wanted: impl Fn(&[String], &str) -> bool,
    mut visit: impl FnMut(Visit<'_>) -> Result<(), LoadError>,
) -> Result<(), LoadError> {
    let mut reader = NsReader::from_str(text);
    reader.config_mut().check_end_names = true;
    let base = text.as_ptr() as usize;
    let error = |code: &'static str, range: Range<usize>, message: String| {
        LoadError::at(code, path, text, range, message)
    };
    // Root namespace: None before the root is read; Some(None) for no namespace.
    let mut root_ns: Option<Option<String>> = None;
    let mut ancestors: Vec<String> = Vec::new();
    // Elements of the part being built, innermost last.
    let mut building: Vec<Element> = Vec::new();
    loop {
        let start = reader.buffer_position() as usize;
        let (ns, event) = match reader.read_resolved_event() {
            Ok(x) => x,
            Err(e) => {
                let at = (reader.error_position() as usize).min(text.len());
                return Err(error(
                    "ddi.syntax",
                    at..at + 1,
                    format!("the XML is not well formed: {e}"),
                )
                .with_help("fix the XML at this place; `xmllint --noout FILE` shows the same"));
            }
        };
        let namespace = match ns {
            ResolveResult::Bound(n) => Some(String::from_utf8_lossy(n.as_ref()).into_owned()),
            _ => None,
        };
        let end = reader.buffer_position() as usize;
        match event {
            Event::Start(ref tag) | Event::Empty(ref tag) => {
                let empty = matches!(event, Event::Empty(_));
                let element = open(tag, namespace.as_deref(), &root_ns, base, start..end, text)
                    .map_err(|(range, m)| error("ddi.syntax", range, m))?;
                if ancestors.len() + building.len() > MAX_DEPTH {
                    return Err(error(
                        "ddi.too-deep",
                        start..end,
                        format!("markup is nested more than {MAX_DEPTH} levels deep"),
                    ));
                }
                if let Some(id) = element.attr("ID") {
                    visit(Visit::Id(id))?;
                }
                if root_ns.is_none() {
                    if element.name != "codeBook" {
                        return Err(error(
                            "ddi.not-ddi",
                            start..end,
                            format!(
                                "this XML is not a DDI codebook: its root element is <{}>, not <codeBook>",
                                element.name
                            ),
                        )
                        .with_help("give a DDI Codebook (2.5 or 2.6) file, or a native TOML codebook"));
                    }
                    if let Some(n) = &namespace {
                        if !NAMESPACES.contains(&n.as_str()) {
                            return Err(error(
                                "ddi.unknown-namespace",
                                start..end,
                                format!(
                                    "<codeBook> is in namespace `{n}`, which is not DDI Codebook"
                                ),
                            )
                            .with_help(format!(
                                "concord reads the namespaces {}, or none",
                                NAMESPACES.join(", ")
                            )));
                        }
                    }
                    root_ns = Some(namespace.clone());
                    if empty {
                        return Ok(());
                    }
                    continue;
                }
                if building.is_empty() {
                    if element.ddi && wanted(&ancestors, &element.name) {
                        if empty {
                            visit(Visit::Part(element))?;
                        } else {
                            building.push(element);
                        }
                    } else if !empty {
                        ancestors.push(if element.ddi {
                            element.name
                        } else {
                            String::new()
                        });
                    }
                } else if empty {
                    attach(&mut building, element);
                } else {
                    building.push(element);
                }
            }
            Event::End(_) => {
                if let Some(done) = building.pop() {
                    if building.is_empty() {
                        visit(Visit::Part(done))?;
                    } else {
                        attach(&mut building, done);
                    }
                } else if ancestors.pop().is_none() {
                    // The root closed: whatever follows is outside the document.
                    return Ok(());
                }
            }
            Event::Text(t) => {
                if let Some(parent) = building.last_mut() {
                    let value = t.unescape().map_err(|e| {
                        error("ddi.syntax", start..end, format!("cannot read this text: {e}"))
                            .with_help("only the predefined entities (&amp; &lt; &gt; &quot; &apos;) and character references are allowed")
                    })?;
                    parent
                        .children
                        .push(Node::Text(value.into_owned(), start..end));
                }
            }
            Event::CData(t) => {
                if let Some(parent) = building.last_mut() {
                    let value = String::from_utf8_lossy(&t).into_owned();
                    parent.children.push(Node::Text(value, start..end));
                }
            }
            Event::DocType(d) => {
                let body = String::from_utf8_lossy(&d);
                if body.contains("<!ENTITY") {
                    return Err(error(
                        "ddi.entities",
                        start..end,
                        "the DOCTYPE declares entities, which concord does not expand".to_string(),
                    )
                    .with_help("write the text in place of the entities; DDI codebooks do not need a DOCTYPE"));
                }
            }
            Event::Eof => {
                let open = building
                    .last()
                    .map(|e| e.name.clone())
                    .or_else(|| ancestors.last().cloned())
                    .unwrap_or_else(|| "codeBook".to_string());
                let message = if root_ns.is_none() {
                    "the file holds no XML element".to_string()
                } else {
                    format!("the file ends inside <{open}>: it is truncated")
                };
                let at = text.len();
                return Err(
                    error("ddi.truncated", at.saturating_sub(1)..at, message).with_help(
                        "the file may have been cut off while copying; get a complete copy",
                    ),
                );
            }
            Event::Decl(_) | Event::PI(_) | Event::Comment(_) => {}
        }
    }
}

fn attach(building: &mut [Element], element: Element) {
    if let Some(parent) = building.last_mut() {
        parent.children.push(Node::Element(element));
    }
}

type OpenError = (Range<usize>, String);

fn open(
    tag: &BytesStart<'_>,
    namespace: Option<&str>,
    root_ns: &Option<Option<String>>,
    base: usize,
    span: Range<usize>,
    text: &str,
) -> Result<Element, OpenError> {
    let local = String::from_utf8_lossy(tag.local_name().as_ref()).into_owned();
    let ddi = match root_ns {
        None => true,
        Some(root) => root.as_deref() == namespace,
    };
    let mut attrs = Vec::new();
    for attr in tag.attributes() {
        let attr = attr.map_err(|e| (span.clone(), format!("a malformed attribute: {e}")))?;
        let key = attr.key;
        // xmlns declarations and prefixed attributes (xml:lang, xsi:...) are not DDI's own.
        if key.as_namespace_binding().is_some() || key.prefix().is_some() {
            continue;
        }
        let name = String::from_utf8_lossy(key.local_name().as_ref()).into_owned();
        let raw = attr.value.as_ref();
        let offset = (raw.as_ptr() as usize).wrapping_sub(base);
        let value_span = if offset <= text.len() && offset + raw.len() <= text.len() {
            offset..offset + raw.len()
        } else {
            span.clone()
        };
        let value = attr
            .unescape_value()
            .map_err(|e| {
                (
                    value_span.clone(),
                    format!("cannot read attribute `{name}`: {e}"),
                )
            })?
            .into_owned();
        attrs.push(Attr {
            name,
            value,
            span: value_span,
        });
    }
    Ok(Element {
        name: local,
        ddi,
        attrs,
        children: Vec::new(),
        span,
    })
}
