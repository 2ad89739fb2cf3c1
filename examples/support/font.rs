//! The font for the text in the pictures: a TrueType or OpenType file read at run time and
//! handed to plotters (its `ab_glyph` text path needs no system font library at build time).

use std::path::{Path, PathBuf};
use std::process::Command;

use plotters::style::{register_font, FontStyle};

use super::{failure, Failure};

/// The family name the pictures ask for.
pub const FAMILY: &str = "sans-serif";

/// Files tried when fontconfig is not there to ask.
const USUAL_PLACES: &[&str] = &[
    "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
    "/usr/share/fonts/TTF/DejaVuSans.ttf",
    "/usr/share/fonts/dejavu/DejaVuSans.ttf",
    "/usr/share/fonts/dejavu-sans-fonts/DejaVuSans.ttf",
    "/usr/local/share/fonts/DejaVuSans.ttf",
    "/System/Library/Fonts/Supplemental/Arial.ttf",
    "/Library/Fonts/Arial.ttf",
    "C:\\Windows\\Fonts\\arial.ttf",
];

/// Load `explicit`, or else the first usable of: what fontconfig's `fc-match` names for
/// DejaVu Sans, then the usual places. Registers it for every style under [`FAMILY`].
///
/// # Errors
///
/// A clear message (never a panic) when no usable font is found.
pub fn load(explicit: Option<&Path>) -> Result<(), Failure> {
    if let Some(path) = explicit {
        return register(path).map_err(|why| failure(format!("--font {}: {why}", path.display())));
    }
    let mut tried = Vec::new();
    for path in fontconfig_match("DejaVu Sans")
        .into_iter()
        .chain(USUAL_PLACES.iter().map(PathBuf::from))
    {
        match register(&path) {
            Ok(()) => return Ok(()),
            Err(why) => tried.push(format!("{}: {why}", path.display())),
        }
    }
    Err(failure(format!(
        "no usable TrueType font for the pictures. Tried:\n  {}\nInstall the DejaVu fonts \
         (Debian and Ubuntu: apt-get install fonts-dejavu-core) or pass --font FILE.ttf",
        tried.join("\n  ")
    )))
}

/// The file fontconfig picks for `family`, if `fc-match` runs.
fn fontconfig_match(family: &str) -> Option<PathBuf> {
    let out = Command::new("fc-match")
        .args(["--format=%{file}", family])
        .output()
        .ok()?;
    let file = String::from_utf8(out.stdout).ok()?;
    (out.status.success() && !file.trim().is_empty()).then(|| PathBuf::from(file.trim()))
}

fn register(path: &Path) -> Result<(), String> {
    let bytes = std::fs::read(path).map_err(|e| e.to_string())?;
    // plotters keeps fonts for the life of the program.
    let bytes: &'static [u8] = Box::leak(bytes.into_boxed_slice());
    for style in [FontStyle::Normal, FontStyle::Bold] {
        register_font(FAMILY, style, bytes)
            .map_err(|_| "not a TrueType or OpenType font".to_string())?;
    }
    Ok(())
}
