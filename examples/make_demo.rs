//! Writes the demo workbook `demo-data/greenhouse.xlsx`: an invented
//! greenhouse with four bays, 26 weekly records per bay, and a column of
//! requests for plumb to answer, one of them with a deliberate typo so a new
//! user sees what an error looks like; and a day of substrate moisture after
//! watering, with a curve fitted to it.
//!
//! ```text
//! cargo run --example make_demo              # writes demo-data/greenhouse.xlsx
//! cargo run --example make_demo -- out.xlsx  # writes out.xlsx
//! ```
//!
//! The output is deterministic: a fixed-seed generator, values rounded to
//! the precision a grower would record, and a pinned creation time, so two
//! runs write identical bytes.

use std::error::Error;
use std::path::PathBuf;

use rust_xlsxwriter::{DocProperties, ExcelDateTime, Format, FormatAlign, Workbook};

/// SplitMix64 (G. Steele, D. Lea, C. Flood, "Fast splittable pseudorandom
/// number generators", OOPSLA 2014; constants from memory).
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on [0, 1), from the top 53 bits.
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Standard normal by the Box–Muller transform (Box & Muller 1958).
    fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.uniform(); // in (0, 1]
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// Rounds to `decimals` places, the precision the demo records a quantity at.
fn round_to(x: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (x * scale).round() / scale
}

/// One weekly record of one bay.
struct Record {
    week: u32,
    bay: &'static str,
    light: Option<f64>,
    co2: Option<f64>,
    irrigation: Option<f64>,
    yield_kg: f64,
}

/// Bays, with the invented effect of each on light (hours) and yield (kg/m²).
const BAYS: [(&str, f64, f64); 4] = [("North", -0.6, -0.08), ("South", 0.6, 0.10), ("East", 0.0, 0.04), ("West", 0.0, 0.0)];
const WEEKS: u32 = 26;

/// The invented records. Yield follows a linear model with a slight
/// curvature in light, bay effects and normal noise:
/// yield = 0.15 + 0.055·light − 0.004·(light − 12)² + 0.00045·CO2
///         + 0.008·irrigation + bay + N(0, 0.05²).
fn records() -> Vec<Record> {
    let mut rng = SplitMix64(0x6772_6565_6E68_6F75); // fixed seed
    let mut out = Vec::new();
    for week in 0..WEEKS {
        let season = f64::from(week) / f64::from(WEEKS - 1); // January → July
        for &(bay, light_shift, bay_effect) in &BAYS {
            let light = round_to((9.0 + 6.0 * season + light_shift + 0.5 * rng.normal()).clamp(8.0, 16.0), 1);
            let co2 = (5.0 * ((550.0 + 400.0 * rng.uniform() + if bay == "East" { 80.0 } else { 0.0 }) / 5.0).round())
                .clamp(400.0, 1200.0);
            let irrigation = round_to(18.0 + 0.8 * light + 2.0 * rng.normal(), 1);
            let yield_kg = round_to(
                0.15 + 0.055 * light - 0.004 * (light - 12.0).powi(2)
                    + 0.000_45 * co2
                    + 0.008 * irrigation
                    + bay_effect
                    + 0.05 * rng.normal(),
                2,
            );
            out.push(Record { week, bay, light: Some(light), co2: Some(co2), irrigation: Some(irrigation), yield_kg });
        }
    }
    // A few readings were never taken.
    out[17].light = None;
    out[43].co2 = None;
    out[71].irrigation = None;
    out[90].light = None;
    out
}

/// The request cells, written from N2 down. The first five are the fits
/// (the fifth with the deliberate typo); then a fit for the comparison, two
/// predictions (one at typed values, one from the Plan sheet's table, whose
/// last row lies outside the data on purpose) and a comparison of fits.
const REQUESTS: [&str; 9] = [
    "#linear(Yield, Light)",
    "#linear(Yield, Light + CO2 + Irrigation, name=main)",
    "#linear(Yield, Light + CO2 + Bay, against(Bay=\"East\"), name=bays)",
    "#linear(Yield, Light + Light^2 + CO2, name=curved)",
    "#linear(Yield, Ligth + CO2)",
    "#linear(Yield, Light + CO2, name=simple)",
    "#predict(main, Light=14, CO2=900, Irrigation=30)",
    "#predict(bays, rows=Plan!A1:C5)",
    "#compare(simple, curved, bays)",
];

/// The Plan sheet: conditions a grower might plan for, to predict from.
const PLAN: [(f64, f64, &str); 4] = [(12.0, 700.0, "North"), (14.0, 900.0, "South"), (15.5, 1000.0, "East"), (18.0, 800.0, "West")];

/// The Drying sheet: substrate moisture of one tray, read every hour for a
/// day after watering. Invented: an exponential decay towards the moisture
/// the substrate holds,
/// moisture = 12 + 34·e^(−0.21·hours) + N(0, 0.4²), to one decimal.
fn drying() -> Vec<(f64, f64)> {
    let mut rng = SplitMix64(0x6472_7969_6E67_2121); // fixed seed of its own
    (0..=24)
        .map(|h| {
            let hours = f64::from(h);
            (hours, round_to(12.0 + 34.0 * (-0.21 * hours).exp() + 0.4 * rng.normal(), 1))
        })
        .collect()
}

/// The requests of the Drying sheet, from D2 down: the curve and a
/// prediction from it.
const DRYING_REQUESTS: [&str; 2] = ["#nonlinear(Moisture, a*exp(-k*Hours) + c, start(a=40, k=0.2, c=5), name=drying)", "#predict(drying, Hours=10)"];

/// Column of the requests: N, leaving G..M (seven columns) empty after the table.
const REQUEST_COL: u16 = 13;

const NOTES: [&str; 11] = [
    "About this workbook",
    "Invented data for trying plumb: a greenhouse with four bays (North, South, East, West), one record per bay per week from 5 January 2026.",
    "Light: hours of light per day, daylight plus lamps. CO2: mean concentration in ppm. Irrigation: litres per square metre per week.",
    "Yield: harvested kilograms per square metre in the week.",
    "A few readings are blank: the sensor was offline that week. plumb leaves such rows out of a fit and says how many.",
    "The requests in column N of the Weekly sheet are what plumb answers. Edit them, or type new ones into any empty cell.",
    "The third request compares each bay with East, its reference level (against(Bay=\"East\")): its terms read Bay: North vs East, Bay: South vs East, Bay: West vs East.",
    "The fifth request has a typo on purpose (Ligth), to show how plumb reports an error and suggests the closest column name.",
    "The last requests show predictions from a named fit (at typed values, or for each row of the Plan sheet) and a comparison of fits of Yield.",
    "The Drying sheet holds the moisture of a tray's substrate (% by volume) each hour after watering, and a curve fitted to it: #nonlinear(Moisture, a*exp(-k*Hours) + c, …), where c is the moisture the substrate keeps, a what drains away and k how fast.",
    "Run: plumb run greenhouse.xlsx",
];

fn main() -> Result<(), Box<dyn Error>> {
    let path = match std::env::args_os().nth(1) {
        Some(p) => PathBuf::from(p),
        None => PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("demo-data").join("greenhouse.xlsx"),
    };
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir)?;
    }

    let mut wb = Workbook::new();
    let created = ExcelDateTime::from_ymd(2026, 1, 1)?;
    wb.set_properties(
        &DocProperties::new()
            .set_title("Greenhouse weekly records (invented demo data)")
            .set_author("plumb demo")
            .set_creation_datetime(&created),
    );

    let header = Format::new().set_bold().set_align(FormatAlign::Center);
    let date = Format::new().set_num_format("yyyy-mm-dd");
    let label = Format::new().set_italic();
    let first_week = ExcelDateTime::from_ymd(2026, 1, 5)?.to_excel();

    let ws = wb.add_worksheet();
    ws.set_name("Weekly")?;
    for (j, h) in ["Week", "Bay", "Light", "CO2", "Irrigation", "Yield"].iter().enumerate() {
        ws.write_string_with_format(0, j as u16, *h, &header)?;
    }
    for (i, r) in records().iter().enumerate() {
        let row = i as u32 + 1;
        let week = ExcelDateTime::from_serial_datetime(first_week + 7.0 * f64::from(r.week))?;
        ws.write_datetime_with_format(row, 0, &week, &date)?;
        ws.write_string(row, 1, r.bay)?;
        for (col, v) in [(2, r.light), (3, r.co2), (4, r.irrigation)] {
            if let Some(v) = v {
                ws.write_number(row, col, v)?;
            }
        }
        ws.write_number(row, 5, r.yield_kg)?;
    }
    ws.set_column_width(0, 11)?;
    ws.set_column_width(4, 10)?;
    ws.write_string_with_format(0, REQUEST_COL, "Requests (plumb reads any cell starting with #name( )", &label)?;
    for (i, req) in REQUESTS.iter().enumerate() {
        ws.write_string(i as u32 + 1, REQUEST_COL, *req)?;
    }
    ws.set_column_width(REQUEST_COL, 52)?;
    ws.set_freeze_panes(1, 0)?;

    let plan = wb.add_worksheet();
    plan.set_name("Plan")?;
    for (j, h) in ["Light", "CO2", "Bay"].iter().enumerate() {
        plan.write_string_with_format(0, j as u16, *h, &header)?;
    }
    for (i, (light, co2, bay)) in PLAN.iter().enumerate() {
        let row = i as u32 + 1;
        plan.write_number(row, 0, *light)?;
        plan.write_number(row, 1, *co2)?;
        plan.write_string(row, 2, *bay)?;
    }
    plan.write_string_with_format(6, 0, "Planned conditions; #predict(bays, rows=Plan!A1:C5) on the Weekly sheet predicts Yield for each row. 18 hours of light is beyond the data on purpose.", &label)?;

    let dry = wb.add_worksheet();
    dry.set_name("Drying")?;
    for (j, h) in ["Hours", "Moisture"].iter().enumerate() {
        dry.write_string_with_format(0, j as u16, *h, &header)?;
    }
    for (i, (hours, moisture)) in drying().iter().enumerate() {
        let row = i as u32 + 1;
        dry.write_number(row, 0, *hours)?;
        dry.write_number(row, 1, *moisture)?;
    }
    dry.write_string_with_format(0, 3, "Requests", &label)?;
    for (i, req) in DRYING_REQUESTS.iter().enumerate() {
        dry.write_string(i as u32 + 1, 3, *req)?;
    }
    dry.set_column_width(3, 60)?;
    dry.set_freeze_panes(1, 0)?;

    let notes = wb.add_worksheet();
    notes.set_name("Notes")?;
    notes.write_string_with_format(0, 0, NOTES[0], &header.clone().set_align(FormatAlign::Left))?;
    for (i, line) in NOTES.iter().enumerate().skip(1) {
        notes.write_string(i as u32 + 1, 0, *line)?;
    }
    notes.set_column_width(0, 110)?;

    wb.save(&path)?;
    println!("wrote {}", path.display());
    Ok(())
}
