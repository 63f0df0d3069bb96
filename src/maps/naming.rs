//! Output file naming, in one place.
//!
//! Every map is named in the BIDS key-value style `key-value_key-value_suffix.ext`. BIDS
//! (v1.11.1) defines no entities for group statistic maps, so strata defines its own keys:
//!
//! | key | value | meaning |
//! |---|---|---|
//! | `comm` | `1`, `2`, ... or `all` | community (subgroup) number, or the whole cohort |
//! | `contrast` | camelCase, e.g. `insomniaVsControl` | group A minus group B |
//! | `group` | camelCase label, e.g. `control` | one diagnosis group |
//! | `effect` | `interaction` | a model term other than the contrast: the diagnosis x community interaction |
//!
//! and the suffix names the statistic ([`Statistic::suffix`]): `mean`, `diff`, `t`, `dof`, `p`,
//! `q`, `g`, `F`. Examples: `comm-2_contrast-insomniaVsControl_t`, `comm-all_group-control_mean`,
//! `comm-all_contrast-insomniaVsControl_effect-interaction_F` (the F test that the contrast
//! differs across communities, with its `_p` and `_q`),
//! `comm-1_mean` (all participants of community 1 pooled). Keys are lowercase ASCII letters and
//! digits; values and suffixes ASCII letters and digits only, so names never need quoting and
//! split unambiguously on `_` and `-`.

use super::{Statistic, WriteError};

/// Entity key for the community (`comm-2`, `comm-all`).
pub const COMMUNITY_KEY: &str = "comm";
/// Entity key for a two-group contrast (`contrast-insomniaVsControl`).
pub const CONTRAST_KEY: &str = "contrast";
/// Entity key for one group (`group-control`).
pub const GROUP_KEY: &str = "group";
/// Entity key for a model term other than the contrast (`effect-interaction`).
pub const EFFECT_KEY: &str = "effect";

/// Value of [`EFFECT_KEY`] for the diagnosis x community interaction.
pub const INTERACTION: &str = "interaction";

/// Value of [`COMMUNITY_KEY`] for the whole cohort.
pub const ALL_COMMUNITIES: &str = "all";
/// Joins the two sides of a contrast label (`insomnia` + `Vs` + `Control`).
pub const CONTRAST_JOINER: &str = "Vs";
/// Stand-in for a label with no ASCII letter or digit at all (e.g. `"—"`).
pub const UNLABELLED: &str = "unlabelled";

/// A validated output name: ordered key-value entities and a suffix.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MapName {
    entities: Vec<(String, String)>,
    suffix: String,
}

/// Builds a [`MapName`]; validation happens once, in [`MapNameBuilder::build`].
#[derive(Debug, Clone, Default)]
pub struct MapNameBuilder {
    entities: Vec<(String, String)>,
}

impl MapName {
    /// Start a name; add entities in the order they should appear.
    pub fn builder() -> MapNameBuilder {
        MapNameBuilder::default()
    }

    /// The entities, in order.
    pub fn entities(&self) -> &[(String, String)] {
        &self.entities
    }

    /// The value of entity `key`, if present.
    pub fn entity(&self, key: &str) -> Option<&str> {
        self.entities.iter().find(|(k, _)| k == key).map(|(_, v)| v.as_str())
    }

    /// The suffix (`t`, `mean`, ...).
    pub fn suffix(&self) -> &str {
        &self.suffix
    }

    /// `key-value_key-value_suffix`, without extension.
    pub fn file_stem(&self) -> String {
        let mut stem = String::new();
        for (key, value) in &self.entities {
            stem.push_str(key);
            stem.push('-');
            stem.push_str(value);
            stem.push('_');
        }
        stem.push_str(&self.suffix);
        stem
    }

    /// The same entities with another suffix (e.g. the `dof` map belonging to a `t` map).
    ///
    /// # Errors
    /// [`WriteError::InvalidName`] if `suffix` is not ASCII letters and digits.
    pub fn with_suffix(&self, suffix: &str) -> Result<MapName, WriteError> {
        check_token("suffix", suffix, false)?;
        Ok(MapName { entities: self.entities.clone(), suffix: suffix.to_string() })
    }
}

impl MapNameBuilder {
    /// Add an entity `key-value` (validated in [`MapNameBuilder::build`]).
    pub fn entity(mut self, key: &str, value: &str) -> Self {
        self.entities.push((key.to_string(), value.to_string()));
        self
    }

    /// `comm-<community>`: a community number or [`ALL_COMMUNITIES`].
    pub fn community(self, community: &str) -> Self {
        self.entity(COMMUNITY_KEY, community)
    }

    /// `contrast-<aVsB>` from two free-text group labels, via [`contrast_label`].
    pub fn contrast(self, label_a: &str, label_b: &str) -> Self {
        let label = contrast_label(label_a, label_b);
        self.entity(CONTRAST_KEY, &label)
    }

    /// `effect-interaction`: the diagnosis x community interaction of a contrast.
    pub fn interaction(self) -> Self {
        self.entity(EFFECT_KEY, INTERACTION)
    }

    /// `group-<label>` from a free-text group label, via [`sanitise_label`].
    pub fn group(self, label: &str) -> Self {
        let label = sanitise_label(label);
        self.entity(GROUP_KEY, &label)
    }

    /// Validate and finish the name with `suffix`.
    ///
    /// # Errors
    /// [`WriteError::InvalidName`] when a key is not lowercase ASCII letters/digits, a value or
    /// the suffix is not ASCII letters/digits (or is empty), or a key appears twice.
    pub fn build(self, suffix: &str) -> Result<MapName, WriteError> {
        for (index, (key, value)) in self.entities.iter().enumerate() {
            check_token("entity key", key, true)?;
            check_token(&format!("value of entity '{key}'"), value, false)?;
            if self.entities[..index].iter().any(|(earlier, _)| earlier == key) {
                return Err(WriteError::InvalidName {
                    what: "entity key".to_string(),
                    value: key.clone(),
                    expected: "each key at most once in a name".to_string(),
                });
            }
        }
        check_token("suffix", suffix, false)?;
        Ok(MapName { entities: self.entities, suffix: suffix.to_string() })
    }

    /// [`MapNameBuilder::build`] with the statistic's own suffix.
    ///
    /// # Errors
    /// As [`MapNameBuilder::build`].
    pub fn build_for(self, statistic: Statistic) -> Result<MapName, WriteError> {
        self.build(statistic.suffix())
    }
}

/// A contrast label from two free-text group labels: `insomnia`, `control` ->
/// `insomniaVsControl`; `Major depression`, `healthy-control` -> `majorDepressionVsHealthyControl`.
///
/// Each side goes through [`sanitise_label`]; the second side's first letter is capitalised.
pub fn contrast_label(label_a: &str, label_b: &str) -> String {
    let a = sanitise_label(label_a);
    let b = capitalise(&sanitise_label(label_b));
    format!("{a}{CONTRAST_JOINER}{b}")
}

/// A free-text label as a camelCase ASCII token for a name.
///
/// Any character that is not an ASCII letter or digit separates words; words are joined with
/// their first letter capitalised. The first word starts in lower case unless it is an acronym
/// (two or more capitals, e.g. `ADHD` stays `ADHD`). Non-ASCII letters are dropped (BIDS labels
/// are ASCII). A label with no ASCII letter or digit becomes [`UNLABELLED`].
pub fn sanitise_label(label: &str) -> String {
    let words: Vec<&str> =
        label.split(|c: char| !c.is_ascii_alphanumeric()).filter(|w| !w.is_empty()).collect();
    let Some((first, rest)) = words.split_first() else {
        return UNLABELLED.to_string();
    };
    let mut out = if first.chars().filter(|c| c.is_ascii_uppercase()).count() >= 2 {
        first.to_string()
    } else {
        let mut chars = first.chars();
        let head = chars.next().map(|c| c.to_ascii_lowercase()).into_iter();
        head.chain(chars).collect()
    };
    for word in rest {
        out.push_str(&capitalise(word));
    }
    out
}

fn capitalise(word: &str) -> String {
    let mut chars = word.chars();
    match chars.next() {
        Some(first) => first.to_ascii_uppercase().to_string() + chars.as_str(),
        None => String::new(),
    }
}

fn check_token(what: &str, value: &str, lowercase_only: bool) -> Result<(), WriteError> {
    let valid_char = |c: char| {
        if lowercase_only {
            c.is_ascii_lowercase() || c.is_ascii_digit()
        } else {
            c.is_ascii_alphanumeric()
        }
    };
    if value.is_empty() || !value.chars().all(valid_char) {
        let expected = if lowercase_only {
            "lowercase ASCII letters and digits only (BIDS entity keys)"
        } else {
            "ASCII letters and digits only, not empty (use maps::sanitise_label or maps::contrast_label on free text)"
        };
        return Err(WriteError::InvalidName {
            what: what.to_string(),
            value: value.to_string(),
            expected: expected.to_string(),
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stems_follow_the_documented_examples() {
        let t = MapName::builder().community("2").contrast("insomnia", "control").build_for(Statistic::T);
        assert_eq!(t.unwrap().file_stem(), "comm-2_contrast-insomniaVsControl_t");
        let mean = MapName::builder().community(ALL_COMMUNITIES).group("control").build("mean").unwrap();
        assert_eq!(mean.file_stem(), "comm-all_group-control_mean");
        let pooled = MapName::builder().community("1").build_for(Statistic::Mean).unwrap();
        assert_eq!(pooled.file_stem(), "comm-1_mean");
        assert_eq!(pooled.with_suffix("dof").unwrap().file_stem(), "comm-1_dof");
        assert_eq!(pooled.entity("comm"), Some("1"));
    }

    #[test]
    fn labels_are_sanitised_to_camel_case() {
        assert_eq!(contrast_label("insomnia", "control"), "insomniaVsControl");
        assert_eq!(contrast_label("Major depression", "healthy-control"), "majorDepressionVsHealthyControl");
        assert_eq!(contrast_label("ADHD", "typically developing"), "ADHDVsTypicallyDeveloping");
        assert_eq!(sanitise_label("group 2 (late)"), "group2Late");
        assert_eq!(sanitise_label("—"), UNLABELLED);
    }

    #[test]
    fn invalid_names_are_refused_with_a_fix() {
        let error = MapName::builder().entity("comm", "2-a").build("t").unwrap_err();
        assert_eq!(
            error.to_string(),
            "output name: value of entity 'comm' '2-a' is not valid; expected ASCII letters and digits only, not empty (use maps::sanitise_label or maps::contrast_label on free text)"
        );
        let error = MapName::builder().entity("Comm", "2").build("t").unwrap_err();
        assert!(error.to_string().contains("lowercase ASCII letters and digits only"), "{error}");
        let error = MapName::builder().community("1").community("2").build("t").unwrap_err();
        assert_eq!(
            error.to_string(),
            "output name: entity key 'comm' is not valid; expected each key at most once in a name"
        );
        assert!(MapName::builder().build("").is_err());
        assert!(MapName::builder().build("t_map").is_err());
    }
}
