//! Case conventions of the language's names: the `naming` lint's tests
//! (UpperCamelCase for machines, states, groups and events; snake_case for inputs,
//! outputs and actions) and the conversions the back ends use to derive module, file,
//! field and function names (`BilgePump` -> `bilge_pump`).

/// The declared name closest to a misspelled `name`, for a "did you mean" help: the
/// least edit distance (`strsim`'s optimal string alignment: a swap of two neighbours
/// counts as one edit), at most a third of the longer name rounded down (a name of one
/// or two characters gets only a change of case), a difference of case alone counting
/// as closest; ties go to the alphabetically first, so the suggestion does not depend
/// on hash order. `None` when nothing is that close.
pub fn closest<'a>(name: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let lower = name.to_lowercase();
    candidates
        .into_iter()
        .filter(|c| *c != name)
        .filter_map(|c| {
            let d = if c.to_lowercase() == lower {
                0
            } else {
                strsim::osa_distance(name, c)
            };
            let limit = name.chars().count().max(c.chars().count()) / 3;
            (d <= limit).then_some((d, c))
        })
        .min()
        .map(|(_, c)| c)
}

/// The help line of a misspelled name: ``did you mean `FloatUp`?``, or `None`.
pub fn did_you_mean<'a>(
    name: &str,
    candidates: impl IntoIterator<Item = &'a str>,
) -> Option<String> {
    closest(name, candidates).map(|c| format!("did you mean `{c}`?"))
}

/// UpperCamelCase: starts with an uppercase letter, no underscores.
pub fn is_upper_camel(name: &str) -> bool {
    let name = name.trim_start_matches("r#");
    name.chars().next().is_some_and(|c| c.is_ascii_uppercase()) && !name.contains('_')
}

/// snake_case: lowercase letters, digits and single underscores.
pub fn is_snake(name: &str) -> bool {
    let name = name.trim_start_matches("r#");
    !name.is_empty()
        && name
            .chars()
            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_')
        && !name.starts_with(|c: char| c.is_ascii_digit())
}

/// Converts a name to snake_case (`FloatUp` -> `float_up`).
pub fn to_snake(name: &str) -> String {
    let mut out = String::new();
    let chars: Vec<char> = name.chars().collect();
    for (i, &c) in chars.iter().enumerate() {
        if c.is_uppercase() {
            let prev_lower =
                i > 0 && (chars[i - 1].is_lowercase() || chars[i - 1].is_ascii_digit());
            let next_lower = chars.get(i + 1).is_some_and(|n| n.is_lowercase());
            let prev_upper = i > 0 && chars[i - 1].is_uppercase();
            if i > 0 && !out.ends_with('_') && (prev_lower || (prev_upper && next_lower)) {
                out.push('_');
            }
            out.extend(c.to_lowercase());
        } else {
            out.push(c);
        }
    }
    out
}

/// Converts a name to UpperCamelCase (`float_up` -> `FloatUp`).
pub fn to_upper_camel(name: &str) -> String {
    name.split('_')
        .filter(|p| !p.is_empty())
        .map(|p| {
            let mut cs = p.chars();
            match cs.next() {
                Some(f) => f.to_uppercase().chain(cs).collect::<String>(),
                None => String::new(),
            }
        })
        .collect()
}
