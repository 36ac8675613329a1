//! Test helper: a small well-formedness checker for the SVG the plots
//! write (XML declaration, balanced tags, quoted attributes, entities),
//! and the checks every document must pass.

/// Panics unless `svg` is a well-formed document with one `<svg>` root,
/// a `<title>`, a viewBox, and no `NaN` or `inf` anywhere.
pub(crate) fn assert_clean_svg(svg: &str) {
    if let Err(e) = check_xml(svg) {
        panic!("not well-formed: {e}\n{}", &svg[..svg.len().min(3000)]);
    }
    assert!(svg.starts_with("<?xml version=\"1.0\" encoding=\"UTF-8\""));
    assert!(svg.contains("<title>"));
    assert!(svg.contains("viewBox=\"0 0 "));
    assert!(!svg.contains("NaN"), "NaN in output");
    assert!(!svg.contains("inf"), "inf in output");
}

/// Checks that `s` is one root element with balanced tags, well-formed
/// attributes, and only the five predefined or numeric entities.
pub(crate) fn check_xml(s: &str) -> Result<(), String> {
    let mut rest = s;
    if let Some(after) = rest.strip_prefix("<?xml") {
        let end = after.find("?>").ok_or("unterminated XML declaration")?;
        rest = &after[end + 2..];
    }
    let mut stack: Vec<&str> = Vec::new();
    let mut roots = 0;
    loop {
        let Some(lt) = rest.find('<') else {
            check_text(rest)?;
            if !rest.trim().is_empty() && stack.is_empty() {
                return Err("text after the root element".into());
            }
            break;
        };
        let text = &rest[..lt];
        check_text(text)?;
        if stack.is_empty() && !text.trim().is_empty() {
            return Err(format!("text outside the root: {text:?}"));
        }
        rest = &rest[lt + 1..];
        let end = tag_end(rest).ok_or("unterminated tag")?;
        let tag = &rest[..end];
        rest = &rest[end + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let name = name.trim_end();
            match stack.pop() {
                Some(open) if open == name => {}
                other => return Err(format!("</{name}> closes {other:?}")),
            }
            continue;
        }
        let self_closing = tag.ends_with('/');
        let body = tag.strip_suffix('/').unwrap_or(tag);
        let name_end = body.find(|c: char| c.is_whitespace()).unwrap_or(body.len());
        let name = &body[..name_end];
        if name.is_empty()
            || !name
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == ':')
        {
            return Err(format!("bad element name {name:?}"));
        }
        check_attributes(&body[name_end..])?;
        if stack.is_empty() {
            roots += 1;
        }
        if !self_closing {
            stack.push(name);
        }
    }
    if !stack.is_empty() {
        return Err(format!("unclosed elements {stack:?}"));
    }
    if roots != 1 {
        return Err(format!("{roots} root elements"));
    }
    Ok(())
}

/// Index of the `>` ending a tag, skipping quoted attribute values.
fn tag_end(s: &str) -> Option<usize> {
    let mut quote = None;
    for (i, c) in s.char_indices() {
        match (quote, c) {
            (None, '"' | '\'') => quote = Some(c),
            (Some(q), c) if c == q => quote = None,
            (None, '>') => return Some(i),
            (None, '<') => return None,
            _ => {}
        }
    }
    None
}

/// `name="value"` pairs, each value free of `<` and bare `&`, names unique.
fn check_attributes(mut s: &str) -> Result<(), String> {
    let mut seen = Vec::new();
    loop {
        s = s.trim_start();
        if s.is_empty() {
            return Ok(());
        }
        let eq = s
            .find('=')
            .ok_or(format!("attribute without value: {s:?}"))?;
        let name = s[..eq].trim();
        if name.is_empty() || name.contains(char::is_whitespace) {
            return Err(format!("bad attribute name {name:?}"));
        }
        if seen.contains(&name) {
            return Err(format!("duplicate attribute {name}"));
        }
        seen.push(name);
        let after = s[eq + 1..].trim_start();
        let q = after.chars().next().ok_or("missing attribute value")?;
        if q != '"' && q != '\'' {
            return Err(format!("unquoted attribute {name}"));
        }
        let close = after[1..].find(q).ok_or("unterminated attribute value")?;
        let value = &after[1..1 + close];
        if value.contains('<') {
            return Err(format!("'<' in attribute {name}"));
        }
        check_text(value)?;
        s = &after[close + 2..];
        if !s.is_empty() && !s.starts_with(char::is_whitespace) {
            return Err(format!("no space after attribute {name}"));
        }
    }
}

/// Character data: no `>` needed escaping here, but every `&` must start
/// a known entity, and no character XML forbids.
fn check_text(s: &str) -> Result<(), String> {
    if let Some(c) = s.chars().find(|&c| {
        (c < ' ' && !matches!(c, '\t' | '\n' | '\r')) || c == '\u{FFFE}' || c == '\u{FFFF}'
    }) {
        return Err(format!("forbidden character {c:?}"));
    }
    let mut rest = s;
    while let Some(i) = rest.find('&') {
        rest = &rest[i + 1..];
        let semi = rest.find(';').ok_or("bare '&'")?;
        let entity = &rest[..semi];
        let known = matches!(entity, "amp" | "lt" | "gt" | "quot" | "apos")
            || entity
                .strip_prefix('#')
                .is_some_and(|n| !n.is_empty() && n.chars().all(|c| c.is_ascii_digit()));
        if !known {
            return Err(format!("unknown entity &{entity};"));
        }
        rest = &rest[semi + 1..];
    }
    Ok(())
}

#[test]
fn checker_rejects_broken_documents() {
    assert!(check_xml("<svg><g></svg>").is_err());
    assert!(check_xml("<svg><g/></svg><svg/>").is_err());
    assert!(check_xml("<svg a=1/>").is_err());
    assert!(check_xml("<svg a=\"1\"b=\"2\"/>").is_err());
    assert!(check_xml("<svg>a & b</svg>").is_err());
    assert!(check_xml("<svg>a &amp; b &#38;</svg>").is_ok());
    assert!(check_xml("<?xml version=\"1.0\"?>\n<svg x=\"a>b\"><t>x</t></svg>\n").is_ok());
    assert!(check_xml("<svg>\u{1}</svg>").is_err());
}
