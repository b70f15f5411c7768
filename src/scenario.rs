//! Scenario: the converter, the target, the environment, the
//! board and the selection rules, in TOML. Unknown keys are errors.

use crate::catalog::Technology;
use crate::eseries::ESeries;
use crate::filter::{DampingMode, FilterUse};
use crate::units::{self, Unit};
use anyhow::{bail, Result};
use serde::de::{self, Deserializer, Visitor};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::fmt;
use std::path::{Path, PathBuf};

macro_rules! quantity {
    ($name:ident, $unit:expr) => {
        /// A value read with SI prefixes, stored in SI base units.
        #[derive(Debug, Clone, Copy, PartialEq, Default)]
        pub struct $name(pub f64);

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
                d.deserialize_any(QuantityVisitor($unit)).map($name)
            }
        }
    };
}

struct QuantityVisitor(Unit);

impl<'de> Visitor<'de> for QuantityVisitor {
    type Value = f64;
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(
            f,
            "a {} as a number or a string such as \"4.7u\"",
            self.0.name()
        )
    }
    fn visit_f64<E: de::Error>(self, v: f64) -> std::result::Result<f64, E> {
        if v.is_finite() {
            Ok(v)
        } else {
            Err(E::custom(format!("{v} is not a finite number")))
        }
    }
    fn visit_i64<E: de::Error>(self, v: i64) -> std::result::Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_u64<E: de::Error>(self, v: u64) -> std::result::Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_str<E: de::Error>(self, v: &str) -> std::result::Result<f64, E> {
        units::parse(v, self.0).map_err(|e| E::custom(e.0))
    }
}

quantity!(Farads, Unit::Farad);
quantity!(Ohms, Unit::Ohm);
quantity!(Henries, Unit::Henry);
quantity!(Volts, Unit::Volt);
quantity!(Amperes, Unit::Ampere);
quantity!(Hertz, Unit::Hertz);
quantity!(Seconds, Unit::Second);
quantity!(Fraction, Unit::Fraction);
quantity!(Plain, Unit::Plain);
quantity!(Money, Unit::Cost);

/// A word of the trade read in any letter case (`"Buck"`, `"COST"`); an
/// unknown word is an error that lists the allowed names.
macro_rules! words {
    ($(#[$m:meta])* $name:ident { $($(#[$vm:meta])* $variant:ident = $word:literal),+ $(,)? }) => {
        $(#[$m])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq)]
        #[allow(missing_docs)] // each variant is its own word
        pub enum $name {
            $($(#[$vm])* $variant),+
        }

        words_for!($name { $($variant = $word),+ });
    };
}

/// The words of an enum defined elsewhere (`NAMES`, `name`, `parse` and a
/// case-insensitive `Deserialize`).
macro_rules! words_for {
    ($name:ty { $($variant:ident = $word:literal),+ $(,)? }) => {
        impl $name {
            /// Every allowed spelling, in lower case.
            pub const NAMES: &'static [&'static str] = &[$($word),+];

            /// The word as the scenario spells it (lower case).
            pub fn name(self) -> &'static str {
                match self {
                    $(<$name>::$variant => $word),+
                }
            }

            /// Case-insensitive; `_` and spaces count as `-`.
            pub fn parse(s: &str) -> Option<$name> {
                let s = s.trim().to_ascii_lowercase().replace(['_', ' '], "-");
                match s.as_str() {
                    $($word => Some(<$name>::$variant),)+
                    _ => None,
                }
            }
        }

        words_deserialize!($name);
    };
}

/// A case-insensitive `Deserialize` through the type's `parse` and `NAMES`.
macro_rules! words_deserialize {
    ($name:ty) => {
        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
                let s = String::deserialize(d)?;
                <$name>::parse(&s).ok_or_else(|| de::Error::unknown_variant(&s, <$name>::NAMES))
            }
        }
    };
}

words_for!(FilterUse {
    Off = "off",
    Auto = "auto",
    On = "on",
});

words_for!(DampingMode {
    None = "none",
    Rc = "rc",
    Auto = "auto",
});

words_deserialize!(ESeries);

words!(Topology {
    Buck = "buck",
    Forward = "forward",
    Bridge = "bridge",
    Flyback = "flyback",
    Boost = "boost",
    Module = "module",
});

words!(
    /// How a bridge converter drives its transformer primary.
    #[derive(Default)]
    BridgeKind {
        #[default]
        Full = "full",
        Half = "half",
        PushPull = "push-pull",
    }
);

impl BridgeKind {
    /// Voltage across the primary while a switch pair conducts: `vin`
    /// (full bridge, push-pull) or `vin / 2` (half bridge).
    pub(crate) fn primary_voltage(self, vin: f64) -> f64 {
        match self {
            BridgeKind::Half => vin / 2.0,
            BridgeKind::Full | BridgeKind::PushPull => vin,
        }
    }
}

/// The `[converter]` table.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Converter {
    /// `topology`.
    pub topology: Topology,
    /// `vin`: one input voltage.
    pub vin: Option<Volts>,
    /// `vin_min`: the low end of the input range.
    pub vin_min: Option<Volts>,
    /// `vin_max`: the high end of the input range.
    pub vin_max: Option<Volts>,
    /// `vout`: output voltage.
    pub vout: Volts,
    /// `iout`: output current.
    #[serde(default)]
    pub iout: Amperes,
    /// `fsw`: switching frequency.
    pub fsw: Hertz,
    /// `inductance`: output inductor (buck, forward, bridge), inductor (boost) or primary magnetizing inductance (flyback).
    pub inductance: Option<Henries>,
    /// Tolerance of the converter's inductance (`"20%"` or 0.2); absent = 0.
    pub inductance_tolerance: Option<Fraction>,
    /// `turns_ratio`: Ns/Np (forward, bridge, flyback).
    pub turns_ratio: Option<Plain>,
    /// Bridge kind (full, half, push-pull); only for topology `bridge`.
    pub bridge: Option<BridgeKind>,
    /// `phases`: interleaved buck phases.
    #[serde(default = "one")]
    pub phases: u32,
    /// `edge_time`: commutation time of current steps (flyback, boost).
    #[serde(default)]
    pub edge_time: Seconds,
    /// `max_capacitance`: the converter's limit on added output capacitance.
    pub max_capacitance: Option<Farads>,
    /// `min_capacitance`: the least added capacitance the converter needs.
    #[serde(default)]
    pub min_capacitance: Farads,
    /// `standalone_ripple_pp`: a module's ripple with no added capacitors.
    pub standalone_ripple_pp: Option<Volts>,
    /// `standalone_bandwidth`: the bandwidth of that figure.
    pub standalone_bandwidth: Option<Hertz>,
    /// Low-pass order of the standalone figure (default: the target's).
    pub standalone_bandwidth_order: Option<u32>,
    /// `internal_capacitance`: capacitance already on the converter's output.
    pub internal_capacitance: Option<Farads>,
    /// `internal_esr`: ESR of the internal capacitance.
    #[serde(default)]
    pub internal_esr: Ohms,
    /// `internal_esl`: ESL of the internal capacitance.
    #[serde(default)]
    pub internal_esl: Henries,
}

fn one() -> u32 {
    1
}

impl Converter {
    /// The inductance tolerance as a fraction (0 when not given).
    pub fn inductance_tolerance(&self) -> f64 {
        self.inductance_tolerance.map_or(0.0, |t| t.0)
    }

    /// The bridge kind (full when not given).
    pub(crate) fn bridge_kind(&self) -> BridgeKind {
        self.bridge.unwrap_or_default()
    }

    /// `vin` on the transformer primary (the bridge kind's, else `vin`).
    pub(crate) fn primary_voltage(&self, vin: f64) -> f64 {
        if self.topology == Topology::Bridge {
            self.bridge_kind().primary_voltage(vin)
        } else {
            vin
        }
    }
}

/// The `[target]` table.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Target {
    /// `ripple_pp`: the peak-to-peak limit.
    pub ripple_pp: Volts,
    /// `bandwidth`: the measurement bandwidth (`None`: full bandwidth).
    pub bandwidth: Option<Hertz>,
    /// `bandwidth_order`: low-pass order of the measurement.
    #[serde(default = "one")]
    pub bandwidth_order: u32,
    /// `harmonics`: harmonics to sum; 0 chooses automatically.
    #[serde(default)]
    pub harmonics: usize,
}

/// The `[environment]` table.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Environment {
    /// `temperature_min`, °C.
    #[serde(default = "room")]
    pub temperature_min: f64,
    /// `temperature_max`, °C.
    #[serde(default = "room")]
    pub temperature_max: f64,
    /// Hours in service, for the aging of class II ceramics (0 = none).
    #[serde(default)]
    pub service_hours: f64,
}

fn room() -> f64 {
    25.0
}

impl Default for Environment {
    fn default() -> Self {
        Environment {
            temperature_min: 25.0,
            temperature_max: 25.0,
            service_hours: 0.0,
        }
    }
}

/// The `[board]` table.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Board {
    /// `mounting_inductance`: added in series with every capacitor.
    #[serde(default)]
    pub mounting_inductance: Henries,
    /// `connection_inductance`: between the converter's output and the bank.
    #[serde(default)]
    pub connection_inductance: Henries,
    /// `max_area`: mm².
    pub max_area: Option<Plain>,
    /// `max_height`: mm.
    pub max_height: Option<Plain>,
    /// `max_count`: most parts in the bank.
    pub max_count: Option<u32>,
    /// `max_lines`: most distinct parts.
    pub max_lines: Option<u32>,
}

words!(#[derive(Default)] Objective {
    #[default]
    Cost = "cost",
    Area = "area",
    Count = "count",
});

words!(#[derive(Default)] CapBasis {
    #[default]
    Nominal = "nominal",
    Effective = "effective",
});

/// The `[selection]` table.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Selection {
    /// `objective`.
    #[serde(default)]
    pub objective: Objective,
    /// `line_cost`: added once per distinct part.
    #[serde(default)]
    pub line_cost: Plain,
    /// `max_per_part`: most parts of one line.
    #[serde(default = "twenty")]
    pub max_per_part: u32,
    /// `exclude`: part ids never to use.
    #[serde(default)]
    pub exclude: Vec<String>,
    /// `allow_nrnd`: parts not recommended for new designs may be used.
    #[serde(default)]
    pub allow_nrnd: bool,
    /// `require`: fixed minimum counts per part id.
    #[serde(default)]
    pub require: BTreeMap<String, u32>,
    /// `max_capacitance_basis`.
    #[serde(default)]
    pub max_capacitance_basis: CapBasis,
    /// `[selection.voltage_derating]`: rated × factor must reach vout, per technology.
    #[serde(default)]
    pub voltage_derating: BTreeMap<String, Fraction>,
    /// Extension: require the typical corner to meet the target too (for
    /// banks whose ripple rises with capacitance).
    #[serde(default)]
    pub check_typical: bool,
    /// Extension: design to the target reduced by this fraction (`"10%"`),
    /// leaving margin for what the model leaves out.
    #[serde(default)]
    pub margin: Fraction,
}

fn twenty() -> u32 {
    20
}

impl Default for Selection {
    fn default() -> Self {
        Selection {
            objective: Objective::Cost,
            line_cost: Plain(0.0),
            max_per_part: 20,
            exclude: vec![],
            allow_nrnd: false,
            require: BTreeMap::new(),
            max_capacitance_basis: CapBasis::Nominal,
            voltage_derating: BTreeMap::new(),
            check_typical: false,
            margin: Fraction(0.0),
        }
    }
}

/// The `[transient]` table: the load-step limit.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Transient {
    /// `load_step`: the step of load current, A.
    pub load_step: Amperes,
    /// `max_deviation`: the largest allowed excursion of the output, V.
    pub max_deviation: Volts,
    /// `loop_crossover`: the converter's control-loop crossover frequency, Hz.
    pub loop_crossover: Hertz,
    /// `rise_time`: 10–90 % time of the load step, s (default 1 µs).
    #[serde(default = "one_microsecond")]
    pub rise_time: Seconds,
}

fn one_microsecond() -> Seconds {
    Seconds(1e-6)
}

/// The `[filter]` table: an optional LC post-filter after the converter's
/// own output bank (converter-side bank → inductor → load-side bank with an
/// optional R–C damping leg). Every limit is optional; absent means not
/// checked.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Filter {
    /// `use`: whether `design` considers a filter (off, auto, on; default
    /// off). `--filter` overrides it.
    #[serde(rename = "use", default)]
    pub usage: FilterUse,
    /// `inductors`: the inductor catalog, relative to the scenario file
    /// (`--inductors` overrides; default the bundled demo catalog).
    pub inductors: Option<String>,
    /// `min_corner_frequency`: the filter's corner `1/(2π·sqrt(L·C_load))`
    /// (typical load-side capacitance) must be at least this, Hz.
    pub min_corner_frequency: Option<Hertz>,
    /// `max_output_impedance`: bound on the peak over frequency of the
    /// impedance seen from the load node with the converter-side node held
    /// by the converter, Ω.
    pub max_output_impedance: Option<Ohms>,
    /// `max_dc_drop`: bound on `iout · DCR` at the inductor's highest DCR, V.
    pub max_dc_drop: Option<Volts>,
    /// `damping`: none, rc or auto (default auto).
    #[serde(default)]
    pub damping: DampingMode,
    /// `damping_resistors`: the IEC 60063 series the damping resistor is
    /// taken from (default E24).
    #[serde(default)]
    pub damping_resistors: ESeries,
    /// `damping_resistor_cost`: unit cost of one damping resistor (default
    /// 0.002, common practice, no source).
    #[serde(default = "damping_resistor_cost")]
    pub damping_resistor_cost: Money,
    /// `sense`: where the converter's remote sense connects; only
    /// `converter` (the converter side of the filter) is supported.
    #[serde(default = "converter_sense")]
    pub sense: String,
    /// `count_load_side`: capacitance after the inductor counts toward
    /// `converter.max_capacitance` too (default false: only the
    /// converter-side bank stands inside the converter's loop).
    #[serde(default)]
    pub count_load_side: bool,
    /// Extension: the most equal inductors in parallel (default 1).
    #[serde(default = "one")]
    pub max_inductor_count: u32,
    /// Extension: the most distinct parts in the load-side bank (default:
    /// `board.max_lines`).
    pub load_max_lines: Option<u32>,
    /// Extension: the most parts in the load-side bank (default: no limit
    /// beyond `board.max_count` for the whole design).
    pub load_max_count: Option<u32>,
    /// Extension: the lowest damping resistor considered, Ω (default 10 mΩ).
    #[serde(default = "damping_resistance_min")]
    pub damping_resistance_min: Ohms,
    /// Extension: the highest damping resistor considered, Ω (default 10 Ω).
    #[serde(default = "damping_resistance_max")]
    pub damping_resistance_max: Ohms,
}

/// Default unit cost of one damping resistor (common practice, no source).
pub(crate) const DAMPING_RESISTOR_COST: f64 = 0.002;

fn damping_resistor_cost() -> Money {
    Money(DAMPING_RESISTOR_COST)
}

fn converter_sense() -> String {
    "converter".into()
}

fn damping_resistance_min() -> Ohms {
    Ohms(10e-3)
}

fn damping_resistance_max() -> Ohms {
    Ohms(10.0)
}

impl Default for Filter {
    fn default() -> Self {
        Filter {
            usage: FilterUse::Off,
            inductors: None,
            min_corner_frequency: None,
            max_output_impedance: None,
            max_dc_drop: None,
            damping: DampingMode::Auto,
            damping_resistors: ESeries::E24,
            damping_resistor_cost: damping_resistor_cost(),
            sense: converter_sense(),
            count_load_side: false,
            max_inductor_count: 1,
            load_max_lines: None,
            load_max_count: None,
            damping_resistance_min: damping_resistance_min(),
            damping_resistance_max: damping_resistance_max(),
        }
    }
}

impl Filter {
    /// The damping resistor values the search may use: the series' values
    /// from `damping_resistance_min` to `damping_resistance_max`, Ω.
    pub(crate) fn damping_resistor_values(&self) -> Vec<f64> {
        crate::eseries::values(
            self.damping_resistors,
            self.damping_resistance_min.0,
            self.damping_resistance_max.0,
        )
    }
}

/// A scenario file.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// `name`.
    #[serde(default)]
    pub name: String,
    /// Free text about the product (an extension of the scenario format).
    #[serde(default)]
    pub description: String,
    /// `catalog`: path relative to the scenario file.
    pub catalog: Option<String>,
    /// `[converter]`.
    pub converter: Converter,
    /// `[target]`.
    pub target: Target,
    /// `[environment]`.
    #[serde(default)]
    pub environment: Environment,
    /// `[board]`.
    #[serde(default)]
    pub board: Board,
    /// `[selection]`.
    #[serde(default)]
    pub selection: Selection,
    /// `[transient]`: the optional load-step limit.
    #[serde(default)]
    pub transient: Option<Transient>,
    /// `[filter]`: the optional LC post-filter (absent: `use = "off"`).
    #[serde(default)]
    pub filter: Filter,
    /// Where the scenario came from (for messages and relative paths).
    #[serde(skip)]
    pub source: String,
    /// Folder of the scenario file, for relative paths.
    #[serde(skip)]
    pub dir: Option<PathBuf>,
}

/// Default line-item limit when the board gives none (common practice, no source).
pub(crate) const DEFAULT_MAX_LINES: u32 = 3;

impl Scenario {
    /// Read a scenario file; errors name the file and the key.
    pub fn from_path(path: &Path) -> Result<Scenario> {
        let text = std::fs::read(path)
            .map_err(|e| anyhow::anyhow!("{}: cannot read the scenario: {e}", path.display()))?;
        let text = String::from_utf8(text).map_err(|e| {
            let (line, column) =
                crate::catalog::text_position(e.as_bytes(), e.utf8_error().valid_up_to());
            anyhow::anyhow!(
                "{}: line {line}, column {column}: not UTF-8 text; a scenario is TOML text",
                path.display()
            )
        })?;
        let mut s = Scenario::from_str(&text, &path.display().to_string())?;
        s.dir = path.parent().map(|p| p.to_path_buf());
        Ok(s)
    }

    /// Read scenario text; `source` names it in messages.
    pub fn from_str(text: &str, source: &str) -> Result<Scenario> {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let mut s: Scenario = toml::from_str(text).map_err(|e| {
            let msg = e.to_string();
            anyhow::anyhow!("{source}: {}", msg.trim_end())
        })?;
        s.source = source.to_string();
        s.check()?;
        Ok(s)
    }

    /// Path of the catalog named by the scenario, relative to its file.
    pub fn catalog_path(&self) -> Option<PathBuf> {
        let c = self.catalog.as_ref()?;
        let p = Path::new(c);
        Some(match (&self.dir, p.is_absolute()) {
            (Some(d), false) => d.join(p),
            _ => p.to_path_buf(),
        })
    }

    /// Path of the inductor catalog named by `[filter] inductors`, relative
    /// to the scenario's file.
    pub(crate) fn inductors_path(&self) -> Option<PathBuf> {
        let c = self.filter.inductors.as_ref()?;
        let p = Path::new(c);
        Some(match (&self.dir, p.is_absolute()) {
            (Some(d), false) => d.join(p),
            _ => p.to_path_buf(),
        })
    }

    /// Every given input-voltage value is a corner.
    pub fn vin_corners(&self) -> Vec<f64> {
        let c = &self.converter;
        let mut v: Vec<f64> = [c.vin_min, c.vin, c.vin_max]
            .iter()
            .flatten()
            .map(|x| x.0)
            .collect();
        v.sort_by(|a, b| a.total_cmp(b));
        v.dedup();
        v
    }

    /// Fundamental of the current into the bank: `fsw`, `2·fsw` for a
    /// bridge, `phases·fsw` for an interleaved buck.
    pub fn ripple_frequency(&self) -> f64 {
        let c = &self.converter;
        match c.topology {
            Topology::Bridge => 2.0 * c.fsw.0,
            Topology::Buck => c.phases.max(1) as f64 * c.fsw.0,
            _ => c.fsw.0,
        }
    }

    /// Low-pass order of a module's standalone ripple figure: the
    /// converter's `standalone_bandwidth_order`, else the target's.
    pub fn standalone_bandwidth_order(&self) -> u32 {
        self.converter
            .standalone_bandwidth_order
            .unwrap_or(self.target.bandwidth_order)
    }

    /// The ripple the search designs to: the target less the margin.
    pub fn design_target(&self) -> f64 {
        self.target.ripple_pp.0 * (1.0 - self.selection.margin.0)
    }

    /// `board.max_lines`, or the default.
    pub fn max_lines(&self) -> u32 {
        self.board.max_lines.unwrap_or(DEFAULT_MAX_LINES)
    }

    /// Voltage derating for a technology: scenario value or the default.
    pub fn derating(&self, t: Technology) -> f64 {
        // Keys in any letter case ("Ceramic", "polymer_aluminum").
        self.selection
            .voltage_derating
            .iter()
            .find(|(k, _)| Technology::parse(k) == Some(t))
            .map_or(t.default_derating(), |(_, f)| f.0)
    }

    fn err(&self, key: &str, msg: impl fmt::Display) -> anyhow::Error {
        anyhow::anyhow!("{}: key `{key}`: {msg}", self.source)
    }

    /// `key` must be a finite number above zero.
    fn pos(&self, key: &str, v: f64) -> Result<()> {
        if !(v > 0.0) || !v.is_finite() {
            return Err(self.err(key, format!("{v} must be above zero")));
        }
        Ok(())
    }

    /// `key` must be a finite number, zero or more.
    fn nonneg(&self, key: &str, v: f64) -> Result<()> {
        if !(v >= 0.0) || !v.is_finite() {
            return Err(self.err(key, format!("{v} must be zero or more")));
        }
        Ok(())
    }

    /// Physical sanity of the converter and the limits, each error naming its
    /// key; the first error found is returned.
    fn check(&self) -> Result<()> {
        self.check_switching()?;
        self.check_vin()?;
        self.check_inductance()?;
        self.check_phases_and_turns()?;
        self.check_conversion()?;
        self.check_converter_details()?;
        self.check_module()?;
        self.check_target()?;
        self.check_environment()?;
        self.check_board()?;
        if let Some(tr) = &self.transient {
            self.check_transient(tr)?;
        }
        self.check_selection()
    }

    /// `vout`, `iout` and the switching frequency.
    fn check_switching(&self) -> Result<()> {
        let c = &self.converter;
        self.pos("converter.vout", c.vout.0)?;
        self.nonneg("converter.iout", c.iout.0)?;
        self.pos("converter.fsw", c.fsw.0)?;
        if c.fsw.0 < 1e3 {
            return Err(self.err(
                "converter.fsw",
                format!(
                    "{} is below 1 kHz, slower than any switching converter; bare numbers are hertz — did you mean \"{}\"?",
                    units::format_si(c.fsw.0, "Hz"),
                    units::suggest(c.fsw.0, "k")
                ),
            ));
        }
        if c.fsw.0 > 100e6 {
            return Err(self.err(
                "converter.fsw",
                format!(
                    "{} is outside 1 kHz … 100 MHz",
                    units::format_si(c.fsw.0, "Hz")
                ),
            ));
        }
        Ok(())
    }

    /// The input voltages: above zero, in order, and given where the
    /// topology needs them.
    fn check_vin(&self) -> Result<()> {
        let c = &self.converter;
        for (k, v) in [
            ("converter.vin", c.vin),
            ("converter.vin_min", c.vin_min),
            ("converter.vin_max", c.vin_max),
        ] {
            if let Some(v) = v {
                self.pos(k, v.0)?;
            }
        }
        if let (Some(a), Some(b)) = (c.vin_min, c.vin_max) {
            if a.0 > b.0 {
                return Err(self.err(
                    "converter.vin_min",
                    format!("{} V is above vin_max {} V", a.0, b.0),
                ));
            }
        }
        if c.topology != Topology::Module && self.vin_corners().is_empty() {
            return Err(self.err(
                "converter.vin",
                format!("a {} needs vin (or vin_min / vin_max)", c.topology.name()),
            ));
        }
        Ok(())
    }

    /// Every topology but a module needs a plausible inductance.
    fn check_inductance(&self) -> Result<()> {
        let c = &self.converter;
        if c.topology == Topology::Module {
            return Ok(());
        }
        let Some(l) = c.inductance else {
            return Err(self.err(
                "converter.inductance",
                format!("a {} needs its inductance", c.topology.name()),
            ));
        };
        self.pos("converter.inductance", l.0)?;
        if !(1e-9..=10e-3).contains(&l.0) {
            return Err(self.err(
                "converter.inductance",
                format!(
                    "{} is outside 1 nH … 10 mH, where a converter's inductor lies (an ESL is not meant here); \
                     bare numbers are henries — did you mean \"{}\"?",
                    units::format_si(l.0, "H"),
                    units::suggest(l.0, "u")
                ),
            ));
        }
        Ok(())
    }

    /// Interleaved phases (buck only) and the transformer's turns ratio
    /// (isolated topologies).
    fn check_phases_and_turns(&self) -> Result<()> {
        let c = &self.converter;
        if c.phases == 0 || c.phases > 16 {
            return Err(self.err(
                "converter.phases",
                format!("{} must be from 1 to 16", c.phases),
            ));
        }
        if c.phases > 1 && c.topology != Topology::Buck {
            return Err(self.err(
                "converter.phases",
                "interleaved phases are modelled for the buck only",
            ));
        }
        let isolated = matches!(
            c.topology,
            Topology::Forward | Topology::Bridge | Topology::Flyback
        );
        match c.turns_ratio {
            None if isolated => Err(self.err(
                "converter.turns_ratio",
                format!("a {} needs turns_ratio (Ns/Np)", c.topology.name()),
            )),
            Some(n) => self.pos("converter.turns_ratio", n.0),
            None => Ok(()),
        }
    }

    /// At every vin corner the converter can make `vout`.
    fn check_conversion(&self) -> Result<()> {
        let c = &self.converter;
        let n = c.turns_ratio.map_or(1.0, |n| n.0);
        for vin in self.vin_corners() {
            match c.topology {
                Topology::Buck | Topology::Forward | Topology::Bridge => {
                    let d = c.vout.0 / (c.primary_voltage(vin) * n);
                    if !(d > 0.0 && d < 1.0) {
                        let (formula, what) = if c.topology == Topology::Bridge
                            && c.bridge_kind() == BridgeKind::Half
                        {
                            ("vout/((vin/2)·n)", "a half bridge".to_string())
                        } else {
                            ("vout/(vin·n)", format!("a {}", c.topology.name()))
                        };
                        return Err(self.err(
                            "converter.vout",
                            format!(
                                "duty cycle {formula} = {:.3} at vin = {vin} V is outside (0, 1): {what} cannot make {} V from {vin} V",
                                d,
                                c.vout.0
                            ),
                        ));
                    }
                }
                Topology::Boost => {
                    if c.vout.0 <= vin {
                        return Err(self.err(
                            "converter.vout",
                            format!("a boost needs vout above vin ({} V ≤ {vin} V)", c.vout.0),
                        ));
                    }
                }
                Topology::Flyback => {
                    if c.iout.0 <= 0.0 {
                        return Err(self.err(
                            "converter.iout",
                            "a flyback needs a load current above zero",
                        ));
                    }
                }
                Topology::Module => {
                    if c.vout.0 >= vin {
                        return Err(self.err(
                            "converter.vout",
                            format!("{} V is not below vin {vin} V", c.vout.0),
                        ));
                    }
                }
            }
        }
        if c.topology == Topology::Boost && c.iout.0 <= 0.0 {
            return Err(self.err("converter.iout", "a boost needs a load current above zero"));
        }
        Ok(())
    }

    /// Inductance tolerance, standalone order, edge time, the maker's
    /// capacitance limits and the internal capacitance.
    fn check_converter_details(&self) -> Result<()> {
        let c = &self.converter;
        if let Some(t) = c.inductance_tolerance {
            if !(0.0..0.9).contains(&t.0) {
                return Err(self.err(
                    "converter.inductance_tolerance",
                    format!("{} must be at least 0 and below 0.9 (90 %)", t.0),
                ));
            }
        }
        if let Some(o) = c.standalone_bandwidth_order {
            if o == 0 || o > 8 {
                return Err(self.err(
                    "converter.standalone_bandwidth_order",
                    format!("{o} must be from 1 to 8"),
                ));
            }
        }
        self.nonneg("converter.edge_time", c.edge_time.0)?;
        if c.edge_time.0 * c.fsw.0 > 0.2 {
            return Err(self.err(
                "converter.edge_time",
                format!(
                    "{} s is over a fifth of the switching period",
                    c.edge_time.0
                ),
            ));
        }
        if let Some(m) = c.max_capacitance {
            self.pos("converter.max_capacitance", m.0)?;
            if c.min_capacitance.0 > m.0 {
                return Err(self.err("converter.min_capacitance", "is above max_capacitance"));
            }
        }
        self.nonneg("converter.min_capacitance", c.min_capacitance.0)?;
        if let Some(ci) = c.internal_capacitance {
            self.pos("converter.internal_capacitance", ci.0)?;
        }
        self.nonneg("converter.internal_esr", c.internal_esr.0)?;
        self.nonneg("converter.internal_esl", c.internal_esl.0)
    }

    /// A module needs its standalone ripple and the capacitance that gave
    /// it (a standalone figure at full bandwidth is allowed).
    fn check_module(&self) -> Result<()> {
        let c = &self.converter;
        if c.topology != Topology::Module {
            return Ok(());
        }
        match c.standalone_ripple_pp {
            None => {
                return Err(self.err(
                    "converter.standalone_ripple_pp",
                    "a module needs its measured ripple without added capacitors",
                ))
            }
            Some(v) => self.pos("converter.standalone_ripple_pp", v.0)?,
        }
        if c.internal_capacitance.is_none() {
            return Err(self.err(
                "converter.internal_capacitance",
                "a module needs the capacitance already on its output (the bank that gave standalone_ripple_pp)",
            ));
        }
        if let Some(b) = c.standalone_bandwidth {
            self.pos("converter.standalone_bandwidth", b.0)?;
        }
        Ok(())
    }

    /// The ripple limit, the bandwidths (above the ripple frequency), the
    /// filter order and the harmonic count.
    fn check_target(&self) -> Result<()> {
        let c = &self.converter;
        let t = &self.target;
        self.pos("target.ripple_pp", t.ripple_pp.0)?;
        if t.ripple_pp.0 >= c.vout.0 {
            return Err(self.err(
                "target.ripple_pp",
                format!(
                    "{} is at or above vout {} — a ripple limit is a small part of the output \
                     (prefixes are case-sensitive: `m` is milli, `M` mega; bare numbers are volts) — did you mean \"{}\"?",
                    units::format_si(t.ripple_pp.0, "V"),
                    units::format_si(c.vout.0, "V"),
                    units::suggest(t.ripple_pp.0, "m")
                ),
            ));
        }
        let f_ripple = self.ripple_frequency();
        for (key, bw) in [
            ("target.bandwidth", t.bandwidth),
            ("converter.standalone_bandwidth", c.standalone_bandwidth),
        ] {
            let Some(b) = bw else { continue };
            self.pos(key, b.0)?;
            if b.0 < f_ripple {
                return Err(self.err(
                    key,
                    format!(
                        "{} is below the ripple frequency {}, so no harmonic of the ripple would be measured \
                         (`M` is mega, `m` milli; bare numbers are hertz) — did you mean \"{}\"?",
                        units::format_si(b.0, "Hz"),
                        units::format_si(f_ripple, "Hz"),
                        units::suggest(b.0, "M")
                    ),
                ));
            }
        }
        if t.bandwidth_order == 0 || t.bandwidth_order > 8 {
            return Err(self.err(
                "target.bandwidth_order",
                format!("{} must be from 1 to 8", t.bandwidth_order),
            ));
        }
        if t.harmonics > 20000 {
            return Err(self.err(
                "target.harmonics",
                format!("{} is more than 20000", t.harmonics),
            ));
        }
        Ok(())
    }

    /// The temperature range and the service hours.
    fn check_environment(&self) -> Result<()> {
        let e = &self.environment;
        if !e.temperature_min.is_finite()
            || !e.temperature_max.is_finite()
            || e.temperature_min > e.temperature_max
        {
            return Err(self.err(
                "environment.temperature_min",
                "must be finite and not above temperature_max",
            ));
        }
        if !(e.service_hours >= 0.0) || !e.service_hours.is_finite() || e.service_hours > 1e7 {
            return Err(self.err(
                "environment.service_hours",
                format!(
                    "{} must be from 0 to 10 000 000 hours (0 = no aging)",
                    e.service_hours
                ),
            ));
        }
        Ok(())
    }

    /// The board's inductances and limits. A connection inductance without
    /// internal capacitance is fine: the bank is then fed through it directly.
    fn check_board(&self) -> Result<()> {
        let b = &self.board;
        self.nonneg("board.mounting_inductance", b.mounting_inductance.0)?;
        self.nonneg("board.connection_inductance", b.connection_inductance.0)?;
        if let Some(a) = b.max_area {
            self.pos("board.max_area", a.0)?;
        }
        if let Some(h) = b.max_height {
            self.pos("board.max_height", h.0)?;
        }
        if b.max_lines == Some(0) {
            return Err(self.err("board.max_lines", "must be at least 1"));
        }
        if b.max_count == Some(0) {
            return Err(self.err(
                "board.max_count",
                "must be at least 1 (no bank could be placed)",
            ));
        }
        Ok(())
    }

    /// Line cost, count per part, margin, derating factors and required parts.
    fn check_selection(&self) -> Result<()> {
        let s = &self.selection;
        self.nonneg("selection.line_cost", s.line_cost.0)?;
        if s.max_per_part == 0 || s.max_per_part > 10000 {
            return Err(self.err("selection.max_per_part", "must be from 1 to 10000"));
        }
        if !(0.0..0.9).contains(&s.margin.0) {
            return Err(self.err(
                "selection.margin",
                format!("{} must be at least 0 and below 0.9 (90 %)", s.margin.0),
            ));
        }
        for (k, v) in &s.voltage_derating {
            if Technology::parse(k).is_none() {
                return Err(self.err(
                    &format!("selection.voltage_derating.{k}"),
                    format!(
                        "unknown technology (one of: {})",
                        Technology::ALL.map(|t| t.name()).join(", ")
                    ),
                ));
            }
            if !(v.0 > 0.0 && v.0 <= 1.0) {
                return Err(self.err(
                    &format!("selection.voltage_derating.{k}"),
                    format!("{} must be above 0 and at most 1", v.0),
                ));
            }
        }
        for (k, &v) in &s.require {
            if v > s.max_per_part {
                return Err(self.err(
                    &format!("selection.require.{k}"),
                    format!("{v} is above max_per_part {}", s.max_per_part),
                ));
            }
        }
        self.check_filter()
    }

    /// Physical sanity of the `[filter]` table, each error naming its key.
    fn check_filter(&self) -> Result<()> {
        let f = &self.filter;
        let vout = self.converter.vout.0;
        let sense = f.sense.trim().to_ascii_lowercase();
        if sense != "converter" {
            return Err(self.err(
                "filter.sense",
                format!(
                    "`{}` is not supported: only \"converter\" is. A remote-sense point after the filter puts the \
                     filter's inductor and load-side bank inside the converter's control loop, where their resonance \
                     adds phase lag that can make the loop unstable, and the design here assumes the converter \
                     holds the converter-side node; connect the sense on the converter side of the filter and set \
                     sense = \"converter\"",
                    f.sense
                ),
            ));
        }
        if let Some(fc) = f.min_corner_frequency {
            if !(fc.0 > 0.0) || !fc.0.is_finite() {
                return Err(self.err(
                    "filter.min_corner_frequency",
                    format!("{} must be above zero", fc.0),
                ));
            }
            if fc.0 < 1e3 {
                return Err(self.err(
                    "filter.min_corner_frequency",
                    format!(
                        "{} is below 1 kHz, far below any converter's loop crossover where a post-filter's corner \
                         belongs; bare numbers are hertz — did you mean \"{}\"?",
                        units::format_si(fc.0, "Hz"),
                        units::suggest(fc.0, "k")
                    ),
                ));
            }
            let fr = self.ripple_frequency();
            if fc.0 >= fr {
                return Err(self.err(
                    "filter.min_corner_frequency",
                    format!(
                        "{} is at or above the ripple frequency {}: a filter whose corner lies there does not \
                         attenuate the ripple (its resonance amplifies it); the corner belongs between the loop \
                         crossover and the ripple frequency",
                        units::format_si(fc.0, "Hz"),
                        units::format_si(fr, "Hz")
                    ),
                ));
            }
        }
        if let Some(z) = f.max_output_impedance {
            if !(z.0 > 0.0) || !z.0.is_finite() {
                return Err(self.err(
                    "filter.max_output_impedance",
                    format!("{} must be above zero", z.0),
                ));
            }
            if z.0 > 10.0 {
                return Err(self.err(
                    "filter.max_output_impedance",
                    format!(
                        "{} is not a plausible bound on a power rail's output impedance (above 10 Ω); bare numbers \
                         are ohms — did you mean \"{}\"?",
                        units::format_si(z.0, "Ω"),
                        units::suggest(z.0, "m")
                    ),
                ));
            }
        }
        if let Some(v) = f.max_dc_drop {
            if !(v.0 > 0.0) || !v.0.is_finite() {
                return Err(self.err("filter.max_dc_drop", format!("{} must be above zero", v.0)));
            }
            if v.0 >= vout {
                return Err(self.err(
                    "filter.max_dc_drop",
                    format!(
                        "{} is at or above vout {}: a filter's DC drop is a small part of the output; bare numbers \
                         are volts — did you mean \"{}\"?",
                        units::format_si(v.0, "V"),
                        units::format_si(vout, "V"),
                        units::suggest(v.0, "m")
                    ),
                ));
            }
        }
        let cost = f.damping_resistor_cost.0;
        if !(cost >= 0.0) || !cost.is_finite() {
            return Err(self.err(
                "filter.damping_resistor_cost",
                format!("{cost} must be zero or more"),
            ));
        }
        if f.max_inductor_count == 0 || f.max_inductor_count > 8 {
            return Err(self.err(
                "filter.max_inductor_count",
                format!(
                    "{} must be from 1 to 8 (equal inductors in parallel)",
                    f.max_inductor_count
                ),
            ));
        }
        if f.load_max_lines == Some(0) {
            return Err(self.err("filter.load_max_lines", "must be at least 1"));
        }
        if f.load_max_count == Some(0) {
            return Err(self.err(
                "filter.load_max_count",
                "must be at least 1 (a filter needs a load-side bank)",
            ));
        }
        let (rlo, rhi) = (f.damping_resistance_min.0, f.damping_resistance_max.0);
        for (key, r) in [
            ("filter.damping_resistance_min", rlo),
            ("filter.damping_resistance_max", rhi),
        ] {
            if !(r > 0.0) || !r.is_finite() {
                return Err(self.err(key, format!("{r} must be above zero")));
            }
            if r > 1e3 {
                return Err(self.err(
                    key,
                    format!(
                        "{} is far above any damping resistor of a power rail's filter (above 1 kΩ; a damping \
                         resistor is near sqrt(L/C), milliohms to ohms); bare numbers are ohms",
                        units::format_si(r, "Ω"),
                    ),
                ));
            }
        }
        if rlo > rhi {
            return Err(self.err(
                "filter.damping_resistance_min",
                format!(
                    "{} is above damping_resistance_max {}",
                    units::format_si(rlo, "Ω"),
                    units::format_si(rhi, "Ω")
                ),
            ));
        }
        if f.damping != DampingMode::None && f.damping_resistor_values().is_empty() {
            return Err(self.err(
                "filter.damping_resistance_min",
                format!(
                    "no {} value lies from {} to {}: widen the range or choose a finer series",
                    f.damping_resistors.label(),
                    units::format_si(rlo, "Ω"),
                    units::format_si(rhi, "Ω")
                ),
            ));
        }
        Ok(())
    }

    /// Plausibility of `[transient]`, each error naming its key.
    fn check_transient(&self, tr: &Transient) -> Result<()> {
        let fin = |key: &str, v: f64| -> Result<()> {
            if !(v > 0.0) || !v.is_finite() {
                return Err(self.err(key, format!("{v} must be above zero")));
            }
            Ok(())
        };
        fin("transient.load_step", tr.load_step.0)?;
        if tr.load_step.0 > 1000.0 {
            return Err(self.err(
                "transient.load_step",
                format!(
                    "{} is above 1 kA, more than any point-of-load step; bare numbers are amperes — did you mean \"{}\"?",
                    units::format_si(tr.load_step.0, "A"),
                    units::suggest(tr.load_step.0, "m")
                ),
            ));
        }
        fin("transient.max_deviation", tr.max_deviation.0)?;
        let vout = self.converter.vout.0;
        if tr.max_deviation.0 >= vout {
            return Err(self.err(
                "transient.max_deviation",
                format!(
                    "{} is at or above vout {} — a load-step limit is a small part of the output \
                     (prefixes are case-sensitive: `m` is milli, `M` mega; bare numbers are volts) — did you mean \"{}\"?",
                    units::format_si(tr.max_deviation.0, "V"),
                    units::format_si(vout, "V"),
                    units::suggest(tr.max_deviation.0, "m")
                ),
            ));
        }
        fin("transient.loop_crossover", tr.loop_crossover.0)?;
        let fc = tr.loop_crossover.0;
        if fc < 100.0 {
            return Err(self.err(
                "transient.loop_crossover",
                format!(
                    "{} is below 100 Hz, slower than any switching converter's loop; bare numbers are hertz — did you mean \"{}\"?",
                    units::format_si(fc, "Hz"),
                    units::suggest(fc, "k")
                ),
            ));
        }
        let fsw = self.converter.fsw.0;
        if fc >= 0.5 * fsw {
            return Err(self.err(
                "transient.loop_crossover",
                format!(
                    "{} is at or above half the switching frequency {}: a switching converter's loop crosses over well below that \
                     (common practice, no source: fsw/10 … fsw/5) — did you mean about \"{}\" (fsw/10)?",
                    units::format_si(fc, "Hz"),
                    units::format_si(fsw, "Hz"),
                    units::suggest(fsw / 10.0 / 1e3, "k")
                ),
            ));
        }
        let tr_s = tr.rise_time.0;
        fin("transient.rise_time", tr_s)?;
        if tr_s < 1e-9 {
            return Err(self.err(
                "transient.rise_time",
                format!(
                    "{} is below 1 ns, faster than a load step reaches its capacitors through a board \
                     (the 10–90 % time; the default is 1 µs) — did you mean \"{}\"?",
                    units::format_si(tr_s, "s"),
                    units::suggest(tr_s * 1e3, "u")
                ),
            ));
        }
        if tr_s > 1e-3 {
            return Err(self.err(
                "transient.rise_time",
                format!(
                    "{} is above 1 ms; bare numbers are seconds — did you mean \"{}\"?",
                    units::format_si(tr_s, "s"),
                    units::suggest(tr_s, "u")
                ),
            ));
        }
        Ok(())
    }

    /// Check that the parts named in `exclude` and `require` exist.
    pub fn check_against(&self, catalog: &crate::catalog::Catalog) -> Result<()> {
        self.check_against_parts(catalog, None)
    }

    /// As [`Scenario::check_against`]; `exclude` may name inductors of the
    /// inductor catalog too.
    pub(crate) fn check_against_parts(
        &self,
        catalog: &crate::catalog::Catalog,
        inductors: Option<&crate::inductors::InductorCatalog>,
    ) -> Result<()> {
        for p in &self.selection.exclude {
            if catalog.get(p).is_none() && inductors.is_none_or(|l| l.get(p).is_none()) {
                bail!(
                    "{}: key `selection.exclude`: part `{p}` is not in the catalog {}",
                    self.source,
                    catalog.source
                );
            }
        }
        for p in self.selection.require.keys() {
            if catalog.get(p).is_none() {
                bail!(
                    "{}: key `selection.require.{p}`: part `{p}` is not in the catalog {}",
                    self.source,
                    catalog.source
                );
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MIN: &str = r#"
        [converter]
        topology = "buck"
        vin = 12
        vout = 3.3
        iout = 6
        fsw = "600k"
        inductance = "2.2u"
        [target]
        ripple_pp = "8m"
        bandwidth = "20M"
    "#;

    #[test]
    fn reads_units_and_defaults() {
        let s = Scenario::from_str(MIN, "t.toml").unwrap();
        assert_eq!(s.converter.fsw.0, 600e3);
        assert!((s.converter.inductance.unwrap().0 - 2.2e-6).abs() < 1e-18);
        assert_eq!(s.target.bandwidth_order, 1);
        assert_eq!(s.environment.temperature_min, 25.0);
        assert_eq!(s.selection.max_per_part, 20);
        assert_eq!(s.vin_corners(), vec![12.0]);
    }

    #[test]
    fn unknown_key_is_named() {
        let e = Scenario::from_str(&MIN.replace("iout = 6", "iout = 6\nfws = 3"), "t.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("fws"), "{e}");
        assert!(e.contains("line"), "{e}");
    }

    #[test]
    fn buck_cannot_step_up() {
        let e = Scenario::from_str(&MIN.replace("vout = 3.3", "vout = 15"), "t.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("converter.vout"), "{e}");
    }

    #[test]
    fn flyback_needs_turns_ratio() {
        let e = Scenario::from_str(&MIN.replace("\"buck\"", "\"flyback\""), "t.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("converter.turns_ratio"), "{e}");
    }

    #[test]
    fn trade_words_in_any_letter_case() {
        let t = MIN.replace("\"buck\"", "\"Buck\"")
            + "[selection]\nobjective = \"Cost\"\nmax_capacitance_basis = \"EFFECTIVE\"\n\
               [selection.voltage_derating]\nCeramic = 0.5\n";
        let s = Scenario::from_str(&t, "t.toml").unwrap();
        assert_eq!(s.converter.topology, Topology::Buck);
        assert_eq!(s.selection.objective, Objective::Cost);
        assert_eq!(s.selection.max_capacitance_basis, CapBasis::Effective);
        assert_eq!(s.derating(Technology::Ceramic), 0.5);
        assert_eq!(Objective::parse("AREA"), Some(Objective::Area));
        assert_eq!(BridgeKind::parse("Push-Pull"), Some(BridgeKind::PushPull));
        assert_eq!(BridgeKind::parse("push_pull"), Some(BridgeKind::PushPull));
        // An unknown word still lists the allowed names.
        let e = Scenario::from_str(&MIN.replace("\"buck\"", "\"Buk\""), "t.toml")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("`Buk`") && e.contains("buck") && e.contains("module"),
            "{e}"
        );
    }

    #[test]
    fn plausibility_errors_name_the_key_and_suggest() {
        for (from, to, key, hint) in [
            (
                "ripple_pp = \"8m\"",
                "ripple_pp = \"8M\"",
                "target.ripple_pp",
                "\"8m\"",
            ),
            ("fsw = \"600k\"", "fsw = 600", "converter.fsw", "\"600k\""),
            (
                "bandwidth = \"20M\"",
                "bandwidth = 20",
                "target.bandwidth",
                "\"20M\"",
            ),
            (
                "inductance = \"2.2u\"",
                "inductance = 2.2",
                "converter.inductance",
                "\"2.2u\"",
            ),
            (
                "inductance = \"2.2u\"",
                "inductance = \"0.3n\"",
                "converter.inductance",
                "1 nH",
            ),
        ] {
            let e = Scenario::from_str(&MIN.replace(from, to), "t.toml")
                .unwrap_err()
                .to_string();
            assert!(
                e.contains(&format!("key `{key}`")) && e.contains(hint),
                "{e}"
            );
        }
        // The ripple frequency of a bridge is 2·fsw, of N interleaved phases N·fsw.
        let two = MIN
            .replace("bandwidth = \"20M\"", "bandwidth = \"1M\"")
            .replace("inductance = \"2.2u\"", "inductance = \"2.2u\"\nphases = 2");
        let e = Scenario::from_str(&two, "t.toml").unwrap_err().to_string();
        assert!(e.contains("ripple frequency 1.2 MHz"), "{e}");
    }

    #[test]
    fn v2_keys_are_read() {
        let t = MIN.replace(
            "inductance = \"2.2u\"",
            "inductance = \"2.2u\"\ninductance_tolerance = \"±20%\"",
        ) + "[environment]\nservice_hours = 50000\n";
        let s = Scenario::from_str(&t, "t.toml").unwrap();
        assert!((s.converter.inductance_tolerance() - 0.2).abs() < 1e-15);
        assert_eq!(s.environment.service_hours, 50000.0);
        assert_eq!(s.converter.bridge_kind(), BridgeKind::Full);
        assert_eq!(s.standalone_bandwidth_order(), 1);
        let e = Scenario::from_str(
            &MIN.replace("iout = 6", "iout = 6\ninductance_tolerance = 1.5"),
            "t.toml",
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("converter.inductance_tolerance"), "{e}");
    }

    #[test]
    fn filter_table_defaults_and_words() {
        let s = Scenario::from_str(MIN, "t.toml").unwrap();
        let f = &s.filter;
        assert_eq!(f.usage, FilterUse::Off);
        assert_eq!(f.damping, DampingMode::Auto);
        assert_eq!(f.damping_resistors, ESeries::E24);
        assert_eq!(f.damping_resistor_cost.0, DAMPING_RESISTOR_COST);
        assert!(!f.count_load_side && f.max_inductor_count == 1);
        assert_eq!(s.inductors_path(), None);
        let t = MIN.to_string()
            + "[filter]\nuse = \"AUTO\"\ninductors = \"l.csv\"\nmin_corner_frequency = \"50kHz\"\n\
               max_output_impedance = \"50mOhm\"\nmax_dc_drop = \"30m\"\ndamping = \"RC\"\n\
               damping_resistors = \"e12\"\ndamping_resistor_cost = \"$0.004\"\nsense = \"Converter\"\n\
               count_load_side = true\nmax_inductor_count = 2\nload_max_lines = 2\n\
               damping_resistance_min = \"0R1\"\ndamping_resistance_max = \"2R2\"\n";
        let mut s = Scenario::from_str(&t, "t.toml").unwrap();
        let f = &s.filter;
        assert_eq!(f.usage, FilterUse::Auto);
        assert_eq!(f.damping, DampingMode::Rc);
        assert_eq!(f.damping_resistors, ESeries::E12);
        assert_eq!(f.min_corner_frequency.unwrap().0, 50e3);
        assert!((f.max_output_impedance.unwrap().0 - 0.05).abs() < 1e-15);
        assert!((f.max_dc_drop.unwrap().0 - 0.03).abs() < 1e-15);
        assert_eq!(f.damping_resistor_cost.0, 0.004);
        assert!(f.count_load_side && f.max_inductor_count == 2 && f.load_max_lines == Some(2));
        // IEC 60063 E12 from 0.1 Ω to 2.2 Ω: 0.1 … 0.82, 1 … 2.2.
        let r = f.damping_resistor_values();
        assert_eq!(r.len(), 17, "{r:?}");
        assert!((r[0] - 0.1).abs() < 1e-15 && (r[16] - 2.2).abs() < 1e-15);
        s.dir = Some(PathBuf::from("/x/scen"));
        assert_eq!(s.inductors_path(), Some(PathBuf::from("/x/scen/l.csv")));
        // Unknown words list the allowed ones; unknown keys are named.
        for (bad, want) in [
            ("use = \"maybe\"", "auto"),
            ("damping = \"lc\"", "rc"),
            ("damping_resistors = \"E192\"", "e96"),
            ("dampng = \"rc\"", "dampng"),
        ] {
            let e = Scenario::from_str(&(MIN.to_string() + "[filter]\n" + bad + "\n"), "t.toml")
                .unwrap_err()
                .to_string();
            assert!(e.contains(want) && e.contains("line"), "{e}");
        }
    }

    #[test]
    fn filter_sense_after_the_filter_is_refused_with_the_reason() {
        let e = Scenario::from_str(
            &(MIN.to_string() + "[filter]\nsense = \"load\"\n"),
            "t.toml",
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("key `filter.sense`") && e.contains("inside the converter's control loop"),
            "{e}"
        );
    }

    #[test]
    fn filter_plausibility_errors_name_the_key_and_suggest() {
        for (line, key, hint) in [
            ("min_corner_frequency = 50", "filter.min_corner_frequency", "\"50k\""),
            ("min_corner_frequency = \"2M\"", "filter.min_corner_frequency", "ripple frequency 600 kHz"),
            ("max_output_impedance = 50", "filter.max_output_impedance", "\"50m\""),
            ("max_output_impedance = \"-1m\"", "filter.max_output_impedance", "above zero"),
            ("max_dc_drop = 30", "filter.max_dc_drop", "\"30m\""),
            ("max_dc_drop = \"30mA\"", "max_dc_drop", "voltage"),
            ("damping_resistor_cost = -1", "filter.damping_resistor_cost", "zero or more"),
            ("max_inductor_count = 0", "filter.max_inductor_count", "1 to 8"),
            ("load_max_count = 0", "filter.load_max_count", "at least 1"),
            ("damping_resistance_max = \"10k\"", "filter.damping_resistance_max", "1 kΩ"),
            ("damping_resistance_min = 20", "filter.damping_resistance_min", "above damping_resistance_max"),
            (
                "damping_resistors = \"E6\"\ndamping_resistance_min = \"1.6\"\ndamping_resistance_max = \"2\"",
                "filter.damping_resistance_min",
                "no E6 value",
            ),
        ] {
            let e = Scenario::from_str(&(MIN.to_string() + "[filter]\n" + line + "\n"), "t.toml")
                .unwrap_err()
                .to_string();
            assert!(e.contains(key) && e.contains(hint), "{line}: {e}");
        }
        // Without damping no resistor range is needed.
        let t = MIN.to_string()
            + "[filter]\ndamping = \"none\"\ndamping_resistors = \"E6\"\ndamping_resistance_min = \"1.6\"\n\
               damping_resistance_max = \"2\"\n";
        assert!(Scenario::from_str(&t, "t.toml").is_ok());
    }

    #[test]
    fn wrong_unit_names_key() {
        let e = Scenario::from_str(&MIN.replace("\"2.2u\"", "\"2.2uF\""), "t.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("inductance"), "{e}");
    }
}
