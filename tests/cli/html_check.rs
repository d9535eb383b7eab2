//! A small checker of well-formed HTML of our own, strict enough for the page copse
//! writes (which is also well-formed XML).

/// Checks that `html` is well formed as XML (every element closed in order, attributes
/// quoted, `&` only in entities, no stray `<`) and returns the text of its `h2`
/// headings. A small checker of our own, strict enough for the page copse writes.
pub fn well_formed_headings(html: &str) -> Result<Vec<String>, String> {
    let body = html
        .strip_prefix("<!DOCTYPE html>")
        .ok_or("the page does not start with <!DOCTYPE html>")?;
    let mut stack: Vec<String> = Vec::new();
    let mut heads = Vec::new();
    let mut rest = body;
    let mut text_since = String::new();
    let check_text = |t: &str| -> Result<(), String> {
        let mut s = t;
        while let Some(i) = s.find('&') {
            let after = &s[i + 1..];
            let end = after
                .find(';')
                .ok_or(format!("bare & near {:?}", &after[..after.len().min(20)]))?;
            let name = &after[..end];
            let ok = name.starts_with('#') && name[1..].chars().all(|c| c.is_ascii_digit())
                || !name.is_empty() && name.chars().all(|c| c.is_ascii_alphanumeric());
            if !ok {
                return Err(format!("bad entity &{name};"));
            }
            s = &after[end..];
        }
        if t.contains('>') {
            return Err(format!("stray > in text {:?}", &t[..t.len().min(40)]));
        }
        Ok(())
    };
    while let Some(lt) = rest.find('<') {
        let text = &rest[..lt];
        check_text(text)?;
        text_since.push_str(text);
        let gt = rest[lt..].find('>').ok_or("a tag that never closes")? + lt;
        let tag = &rest[lt + 1..gt];
        rest = &rest[gt + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let open = stack.pop().ok_or(format!("</{name}> closes nothing"))?;
            if open != name.trim() {
                return Err(format!("</{name}> closes <{open}>"));
            }
            if open == "h2" {
                heads.push(text_since.trim().to_string());
            }
            continue;
        }
        let self_closing = tag.ends_with('/');
        let inner = tag.trim_end_matches('/');
        let name = inner
            .split_whitespace()
            .next()
            .ok_or("an empty tag")?
            .to_string();
        if !name.chars().all(|c| c.is_ascii_alphanumeric()) {
            return Err(format!("bad tag name <{name}>"));
        }
        // Attributes: name="value" pairs, values without quotes or <.
        let mut attrs = inner[name.len()..].trim();
        while !attrs.is_empty() {
            let eq = attrs
                .find("=\"")
                .ok_or(format!("unquoted attribute in <{tag}>"))?;
            let close = attrs[eq + 2..]
                .find('"')
                .ok_or("an attribute that never closes")?
                + eq
                + 2;
            check_text(&attrs[eq + 2..close])?;
            attrs = attrs[close + 1..].trim_start();
        }
        if !self_closing {
            if name == "h2" {
                text_since.clear();
            }
            stack.push(name);
        }
    }
    check_text(rest)?;
    if !stack.is_empty() {
        return Err(format!("unclosed elements {stack:?}"));
    }
    Ok(heads)
}

/// The checker refuses what a browser would have to guess at.
#[test]
fn the_checker_refuses_broken_pages() {
    let ok = "<!DOCTYPE html><html><h2>A &amp; B</h2><br/></html>";
    assert_eq!(well_formed_headings(ok), Ok(vec!["A &amp; B".to_string()]));
    for bad in [
        "<html><h2>x</h2></html>",
        "<!DOCTYPE html><p>a & b</p>",
        "<!DOCTYPE html><p><b>x</p></b>",
        "<!DOCTYPE html><p class=x>y</p>",
        "<!DOCTYPE html><div>",
    ] {
        assert!(well_formed_headings(bad).is_err(), "{bad}");
    }
}
