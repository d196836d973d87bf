//! Finding the line of a field inside one item of a YAML list.
//!
//! [`crate::yaml::locate_key`] ignores list indices, so a check that fails on the third
//! lot of a lot list would point at the first lot's line. Lot lists and rig lists are
//! written one item per line in flow style (`- { lot: L1, quantity: 0 }`) or as block
//! mappings, and this finds the right item in both.

/// The 1-based line of `field` (a dotted path inside the item, e.g. `reference.serial`)
/// in item `index` (0-based) of the top-level list `list_key`.
///
/// Falls back to the item's first line when the field is not written in the item, and
/// to the list's own line when the item cannot be found (a list in flow style on one
/// line, say). `None` only when the list key itself is not in the text.
pub fn locate_item_field(text: &str, list_key: &str, index: usize, field: &str) -> Option<usize> {
    let lines: Vec<&str> = text.lines().collect();
    let list_line = lines.iter().position(|raw| {
        let body = raw.trim_end();
        !raw.starts_with([' ', '\t', '#'])
            && body.split_once(':').is_some_and(|(key, _)| key.trim() == list_key)
    })?;
    let mut item_indent: Option<usize> = None;
    let mut items: Vec<usize> = Vec::new();
    let mut end = lines.len();
    for (number, raw) in lines.iter().enumerate().skip(list_line + 1) {
        let trimmed = raw.trim_start();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        let indent = raw.len() - trimmed.len();
        let is_item = trimmed == "-" || trimmed.starts_with("- ");
        match item_indent {
            None if is_item => {
                item_indent = Some(indent);
                items.push(number);
            }
            None => break,
            Some(level) if indent == level && is_item => items.push(number),
            Some(level) if indent > level => {}
            Some(_) => {
                end = number;
                break;
            }
        }
    }
    let Some(&start) = items.get(index) else { return Some(list_line + 1) };
    let stop = items.get(index + 1).copied().unwrap_or(end);
    let mut found = None;
    let mut from = start;
    for part in field.split('.').filter(|p| !p.is_empty()) {
        match (from..stop).find(|&n| has_key(lines[n], part)) {
            Some(n) => {
                found = Some(n);
                from = n;
            }
            None => break,
        }
    }
    Some(found.unwrap_or(start) + 1)
}

/// True when `line` holds `key:` as a key (not as the tail of a longer key or a value).
fn has_key(line: &str, key: &str) -> bool {
    let pattern = format!("{key}:");
    let mut offset = 0;
    while let Some(pos) = line[offset..].find(&pattern) {
        let at = offset + pos;
        let before = line[..at].chars().next_back();
        let after = line[at + pattern.len()..].chars().next();
        let starts = before.is_none_or(|c| c.is_whitespace() || c == '{' || c == ',' || c == '-');
        let ends = after.is_none_or(|c| c.is_whitespace());
        if starts && ends {
            return true;
        }
        offset = at + pattern.len();
    }
    false
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flow_items_one_per_line() {
        let text = "# lots\nlots:\n  - { lot: A, wire_lot: W, quantity: 1 }\n  - { lot: B, quantity: 0 }\nother: 1\n";
        assert_eq!(locate_item_field(text, "lots", 0, "lot"), Some(3));
        assert_eq!(locate_item_field(text, "lots", 1, "quantity"), Some(4));
        assert_eq!(locate_item_field(text, "lots", 1, "weight"), Some(4));
        assert_eq!(locate_item_field(text, "lots", 5, "lot"), Some(2));
        assert_eq!(locate_item_field(text, "rigs", 0, "lot"), None);
    }

    #[test]
    fn block_items_and_nested_fields() {
        let text = "plant: x\nrigs:\n- name: A\n  reference:\n    serial: R1\n    check_angle_deg: 90\n\
                    - name: B\n  check_angle_deg: 5\n  reference: { serial: R2, check_angle_deg: 0 }\n\
                    sinks: []\n";
        assert_eq!(locate_item_field(text, "rigs", 0, "reference.check_angle_deg"), Some(6));
        assert_eq!(locate_item_field(text, "rigs", 1, "reference.check_angle_deg"), Some(9));
        assert_eq!(locate_item_field(text, "rigs", 1, "name"), Some(7));
    }

    #[test]
    fn keys_inside_values_do_not_count() {
        assert!(has_key("  - { lot: L1, ship_by: \"2026-12-02T06:00\" }", "lot"));
        assert!(!has_key("  - { wire_lot: W1 }", "lot"));
        assert!(!has_key("  - { note: \"T06:00\" }", "T06"));
    }
}
