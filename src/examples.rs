//! The bundled example layouts, one per job the tool is built for. The
//! same files live in `examples/layouts/`; the CLI writes them with
//! `beamwright examples NAME -o FILE`, and the tests run each one and check
//! its headline numbers against closed forms.

/// A bundled layout.
#[derive(Debug, Clone, Copy)]
pub struct Example {
    /// Name used on the command line.
    pub name: &'static str,
    /// One-line description.
    pub summary: &'static str,
    /// The layout text (TOML).
    pub layout: &'static str,
}

/// All bundled examples.
pub const ALL: &[Example] = &[
    Example {
        name: "expander-clipping",
        summary:
            "3x beam expander whose output lens clips the beam: power lost and downstream rings",
        layout: include_str!("../examples/layouts/expander-clipping.toml"),
    },
    Example {
        name: "donut-trap",
        summary: "vortex plate + focusing lens: LG0,1 purity, ring radius and dark centre at focus",
        layout: include_str!("../examples/layouts/donut-trap.toml"),
    },
    Example {
        name: "relay",
        summary: "two-lens relay designed paraxially; the paraxial check holds (use --strict)",
        layout: include_str!("../examples/layouts/relay.toml"),
    },
    Example {
        name: "relay-degraded",
        summary:
            "the same relay with an aberrated, undersized second lens; --strict fails and says why",
        layout: include_str!("../examples/layouts/relay-degraded.toml"),
    },
];

/// The example called `name`.
pub fn find(name: &str) -> Option<&'static Example> {
    ALL.iter().find(|e| e.name == name)
}

#[cfg(test)]
mod tests {
    #[test]
    fn every_example_validates() {
        for e in super::ALL {
            let path = std::path::PathBuf::from(format!("examples/layouts/{}.toml", e.name));
            crate::layout::parse(e.layout, &path)
                .unwrap_or_else(|err| panic!("example {} is invalid: {err}", e.name));
        }
    }
}
