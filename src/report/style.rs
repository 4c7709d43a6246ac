//! Whether the terminal summary uses colour, and the few ANSI styles it uses. The decision
//! follows the common conventions: `NO_COLOR` (no-color.org) turns colour off, `CLICOLOR_FORCE`
//! turns it on, `CLICOLOR=0` and `TERM=dumb` turn it off, and otherwise only a terminal gets it.

use std::io::IsTerminal;

/// How the terminal summary is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct TerminalStyle {
    pub color: bool,
}

/// The environment variables that decide colour, as read (`None` when unset).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ColorEnv {
    pub no_color: Option<String>,
    pub clicolor_force: Option<String>,
    pub clicolor: Option<String>,
    pub term: Option<String>,
}

impl ColorEnv {
    /// Reads the process environment.
    pub fn from_process() -> Self {
        let var = |name| std::env::var(name).ok();
        Self {
            no_color: var("NO_COLOR"),
            clicolor_force: var("CLICOLOR_FORCE"),
            clicolor: var("CLICOLOR"),
            term: var("TERM"),
        }
    }
}

impl TerminalStyle {
    pub const PLAIN: TerminalStyle = TerminalStyle { color: false };

    /// Colour for standard output, decided from the environment and whether it is a terminal.
    pub fn detect() -> Self {
        Self::decide(&ColorEnv::from_process(), std::io::stdout().is_terminal())
    }

    /// The decision itself, for a given environment.
    pub fn decide(env: &ColorEnv, is_terminal: bool) -> Self {
        let set = |v: &Option<String>| v.as_deref().is_some_and(|s| !s.is_empty());
        let color = if set(&env.no_color) {
            false
        } else if set(&env.clicolor_force) && env.clicolor_force.as_deref() != Some("0") {
            true
        } else if env.clicolor.as_deref() == Some("0") || env.term.as_deref() == Some("dumb") {
            false
        } else {
            is_terminal
        };
        Self { color }
    }

    /// `text` in the given tone (unchanged without colour).
    pub fn paint(&self, text: &str, tone: Tone) -> String {
        if self.color {
            format!("{}{text}\x1b[0m", tone.code())
        } else {
            text.to_string()
        }
    }
}

/// The meaning a piece of text carries; each maps to one ANSI style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tone {
    Good,
    Caution,
    Bad,
    Heading,
    Dim,
}

impl Tone {
    fn code(self) -> &'static str {
        match self {
            Tone::Good => "\x1b[1;32m",
            Tone::Caution => "\x1b[1;33m",
            Tone::Bad => "\x1b[1;31m",
            Tone::Heading => "\x1b[1m",
            Tone::Dim => "\x1b[2m",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn env(no_color: Option<&str>, force: Option<&str>, term: Option<&str>) -> ColorEnv {
        ColorEnv {
            no_color: no_color.map(Into::into),
            clicolor_force: force.map(Into::into),
            clicolor: None,
            term: term.map(Into::into),
        }
    }

    #[test]
    fn terminal_gets_colour_unless_told_otherwise() {
        assert!(TerminalStyle::decide(&env(None, None, Some("xterm")), true).color);
        assert!(!TerminalStyle::decide(&env(None, None, Some("xterm")), false).color);
        assert!(!TerminalStyle::decide(&env(None, None, Some("dumb")), true).color);
    }

    #[test]
    fn no_color_wins_and_force_overrides_pipes() {
        assert!(!TerminalStyle::decide(&env(Some("1"), Some("1"), None), true).color);
        assert!(TerminalStyle::decide(&env(Some(""), None, None), true).color);
        assert!(TerminalStyle::decide(&env(None, Some("1"), None), false).color);
        assert!(!TerminalStyle::decide(&env(None, Some("0"), None), false).color);
    }

    #[test]
    fn plain_style_adds_no_escapes() {
        assert_eq!(TerminalStyle::PLAIN.paint("x", Tone::Bad), "x");
        let coloured = TerminalStyle { color: true }.paint("x", Tone::Bad);
        assert_eq!(coloured, "\x1b[1;31mx\x1b[0m");
    }
}
