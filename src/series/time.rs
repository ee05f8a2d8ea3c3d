//! Logger timestamps: parsing local wall-clock times and turning them into instants.
//!
//! Times are parsed as naive local wall-clock times (milliseconds since 1970-01-01 00:00 on the
//! local clock), then mapped to UTC with the station's zone. Calendar arithmetic uses Howard
//! Hinnant's `days_from_civil` algorithm ("chrono-Compatible Low-Level Date Algorithms", 2013).
//!
//! **Daylight-saving rule** (documented in the README): a local time that does not exist (the
//! spring-forward gap) is never guessed: its row gets no time and the flag `missing`. A local
//! time that occurs twice (the fall-back hour) is taken as the earlier instant (summer time) until
//! the logger's clock is seen to step back within that repeated hour; from then until the repeated
//! hour ends it is taken as the later instant (standard time). Every row resolved this way is
//! counted and listed in the provenance. Loggers kept on standard time all year avoid the issue:
//! give a fixed offset such as `+01:00`.

use chrono::{LocalResult, NaiveDate, NaiveDateTime, TimeZone};

const MS_PER_DAY: i64 = 86_400_000;
const MS_PER_HOUR: i64 = 3_600_000;

/// Days from 1970-01-01 to the civil date (proleptic Gregorian), Hinnant's algorithm.
pub fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let m = m as i64;
    let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + d as i64 - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The civil date (year, month, day) of a day count from 1970-01-01, Hinnant's algorithm.
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

fn days_in_month(y: i64, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        _ => 28,
    }
}

/// `YYYY-MM-DD` of a day count.
pub fn date_string(day: i64) -> String {
    let (y, m, d) = civil_from_days(day);
    format!("{y:04}-{m:02}-{d:02}")
}

/// Local wall-clock milliseconds of a date and time.
fn wall_ms(y: i64, mo: u32, d: u32, h: u32, mi: u32, s: u32, ms: u32) -> Option<i64> {
    if !(1..=12).contains(&mo) || d == 0 || d > days_in_month(y, mo) {
        return None;
    }
    Some(days_from_civil(y, mo, d) * MS_PER_DAY + clock_ms(h, mi, s, ms)?)
}

/// Milliseconds since midnight of a clock time; `None` for an hour, minute or second out of range
/// (a leap second, :60, is allowed).
fn clock_ms(h: u32, mi: u32, s: u32, ms: u32) -> Option<i64> {
    if h > 23 || mi > 59 || s > 60 {
        return None;
    }
    Some(((i64::from(h) * 60 + i64::from(mi)) * 60 + i64::from(s)) * 1000 + i64::from(ms))
}

/// One piece of a time format.
#[derive(Debug, Clone, PartialEq)]
enum Tok {
    Year4,
    Year2,
    Month,
    Day,
    Hour,
    Minute,
    Second,
    /// `%.f`: optional fraction of a second, with its dot
    Fraction,
    Lit(u8),
}

/// A strftime-style time format. `%Y %y %m %d %H %M %S %.f` and literal characters are parsed by
/// a fast path; any other specifier hands the whole format to chrono's parser.
#[derive(Debug, Clone, PartialEq)]
pub struct TimeFormat {
    text: String,
    fast: Option<Vec<Tok>>,
    /// For formats of fixed width (no `%.f`): where each field and literal sits when every
    /// number has its full width, as most logger exports write them.
    fixed: Option<Fixed>,
}

/// A fixed-width layout: total length, numeric fields (token, position, width) and literals.
#[derive(Debug, Clone, PartialEq)]
struct Fixed {
    len: usize,
    fields: Vec<(Tok, usize, usize)>,
    literals: Vec<(usize, u8)>,
    /// When the date fields all come first: the bytes up to the first clock field, and how many
    /// fields they hold.
    date: Option<(usize, usize)>,
}

/// The last date read by a format, so that the rows of one day parse only their clock time.
/// One per format and thread; see [`TimeFormat::parse_cached`].
#[derive(Debug, Clone, Default)]
pub struct DayCache {
    prefix: [u8; 16],
    len: usize,
    day_ms: i64,
}

impl Fixed {
    fn new(toks: &[Tok]) -> Option<Self> {
        let (mut fields, mut literals, mut at) = (Vec::new(), Vec::new(), 0);
        for t in toks {
            let width = match t {
                Tok::Year4 => 4,
                Tok::Year2 | Tok::Month | Tok::Day | Tok::Hour | Tok::Minute | Tok::Second => 2,
                Tok::Fraction => return None,
                Tok::Lit(c) => {
                    literals.push((at, *c));
                    at += 1;
                    continue;
                }
            };
            fields.push((t.clone(), at, width));
            at += width;
        }
        let is_date = |t: &Tok| matches!(t, Tok::Year4 | Tok::Year2 | Tok::Month | Tok::Day);
        let date_fields = fields.iter().take_while(|f| is_date(&f.0)).count();
        let date = (date_fields > 0 && !fields[date_fields..].iter().any(|f| is_date(&f.0))).then(|| {
            let end = fields.get(date_fields).map_or(at, |f| f.1);
            (end, date_fields)
        });
        let date = date.filter(|(end, _)| *end <= 16);
        Some(Self {
            len: at,
            fields,
            literals,
            date,
        })
    }

    /// The same result as the general parser for text laid out exactly so; `None` otherwise
    /// (the general parser then decides). A row of the same date as the cache's reads only its
    /// clock fields.
    #[inline]
    fn parse(&self, b: &[u8], cache: &mut DayCache) -> Option<i64> {
        if b.len() != self.len || self.literals.iter().any(|&(p, c)| b[p] != c) {
            return None;
        }
        if let Some((end, n)) = self.date {
            if cache.len == end && b[..end] == cache.prefix[..end] {
                let (mut h, mut mi, mut s) = (0u32, 0u32, 0u32);
                for (t, p, w) in &self.fields[n..] {
                    let v = Self::number(&b[*p..*p + *w])?;
                    match t {
                        Tok::Hour => h = v,
                        Tok::Minute => mi = v,
                        _ => s = v,
                    }
                }
                return Some(cache.day_ms + clock_ms(h, mi, s, 0)?);
            }
        }
        let v = self.parse_all(b)?;
        if let Some((end, _)) = self.date {
            cache.prefix[..end].copy_from_slice(&b[..end]);
            cache.len = end;
            cache.day_ms = v - v.rem_euclid(MS_PER_DAY);
        }
        Some(v)
    }

    #[inline]
    fn number(digits: &[u8]) -> Option<u32> {
        let mut v = 0u32;
        for &c in digits {
            if !c.is_ascii_digit() {
                return None;
            }
            v = v * 10 + u32::from(c - b'0');
        }
        Some(v)
    }

    fn parse_all(&self, b: &[u8]) -> Option<i64> {
        let (mut y, mut mo, mut d, mut h, mut mi, mut s) = (1970i64, 1u32, 1u32, 0u32, 0u32, 0u32);
        for (t, p, w) in &self.fields {
            let v = Self::number(&b[*p..*p + *w])?;
            match t {
                Tok::Year4 => y = i64::from(v),
                Tok::Year2 => y = century_of(v),
                Tok::Month => mo = v,
                Tok::Day => d = v,
                Tok::Hour => h = v,
                Tok::Minute => mi = v,
                Tok::Second => s = v,
                Tok::Fraction | Tok::Lit(_) => {}
            }
        }
        wall_ms(y, mo, d, h, mi, s, 0)
    }
}

impl TimeFormat {
    /// Compiles a format such as `%Y-%m-%d %H:%M:%S`.
    pub fn new(text: &str) -> Self {
        let mut toks = Vec::new();
        let b = text.as_bytes();
        let mut i = 0;
        let mut fast = true;
        while i < b.len() {
            if b[i] == b'%' && i + 1 < b.len() {
                let t = match b[i + 1] {
                    b'Y' => Tok::Year4,
                    b'y' => Tok::Year2,
                    b'm' => Tok::Month,
                    b'd' => Tok::Day,
                    b'H' => Tok::Hour,
                    b'M' => Tok::Minute,
                    b'S' => Tok::Second,
                    b'.' if b.get(i + 2) == Some(&b'f') => {
                        i += 1;
                        Tok::Fraction
                    }
                    b'%' => Tok::Lit(b'%'),
                    _ => {
                        fast = false;
                        break;
                    }
                };
                toks.push(t);
                i += 2;
            } else {
                toks.push(Tok::Lit(b[i]));
                i += 1;
            }
        }
        let fixed = if fast { Fixed::new(&toks) } else { None };
        Self {
            text: text.to_string(),
            fast: fast.then_some(toks),
            fixed,
        }
    }

    /// Checks that a format is one chrono's strftime parser reads: an unknown directive (such
    /// as `%Q`) or a lone `%` at the end is an error that names it.
    pub fn check(text: &str) -> Result<(), String> {
        use chrono::format::{Item, StrftimeItems};
        if text.trim().is_empty() {
            return Err("the time format is empty".into());
        }
        // the fast path's own `%.f` is chrono's too
        if StrftimeItems::new(text).any(|i| matches!(i, Item::Error)) {
            // a directive is %, optional modifiers, a letter: the shortest piece from each %
            // that chrono reads is fine; a % that starts none is named
            let ok = |d: &str| !StrftimeItems::new(d).any(|it| matches!(it, Item::Error));
            let chars: Vec<(usize, char)> = text.char_indices().collect();
            let mut bad = Vec::new();
            let mut k = 0;
            while k < chars.len() {
                if chars[k].1 != '%' {
                    k += 1;
                    continue;
                }
                let piece = |len: usize| {
                    let end = chars.get(k + len).map_or(text.len(), |c| c.0);
                    &text[chars[k].0..end]
                };
                match (2..=4).find(|&len| k + len <= chars.len() && ok(piece(len))) {
                    Some(len) => k += len,
                    None => {
                        bad.push(piece(2.min(chars.len() - k)).to_string());
                        k += 2;
                    }
                }
            }
            return Err(format!(
                "time format \"{text}\" has a directive strftime does not know{}",
                if bad.is_empty() {
                    String::new()
                } else {
                    format!(": {}", bad.join(", "))
                }
            ));
        }
        Ok(())
    }

    /// The format as written.
    pub fn as_str(&self) -> &str {
        &self.text
    }

    /// Parses `s` (surrounding white space ignored) to local wall-clock milliseconds.
    pub fn parse(&self, s: &str) -> Option<i64> {
        self.parse_cached(s, &mut DayCache::default())
    }

    /// As [`TimeFormat::parse`], remembering the last date in `cache` (rows in file order mostly
    /// share their date, which is then not read again).
    pub fn parse_cached(&self, s: &str, cache: &mut DayCache) -> Option<i64> {
        if let Some(v) = self.fixed.as_ref().and_then(|f| f.parse(s.as_bytes(), cache)) {
            return Some(v);
        }
        let s = s.trim();
        match &self.fast {
            Some(toks) => parse_fast(toks, s.as_bytes()),
            None => {
                let dt = NaiveDateTime::parse_from_str(s, &self.text).ok().or_else(|| {
                    NaiveDate::parse_from_str(s, &self.text)
                        .ok()
                        .and_then(|d| d.and_hms_opt(0, 0, 0))
                })?;
                Some(dt.and_utc().timestamp_millis())
            }
        }
    }
}

/// A two-digit year as POSIX strptime reads it: 69–99 are 1969–1999, 00–68 are 2000–2068.
fn century_of(yy: u32) -> i64 {
    let yy = i64::from(yy);
    if yy >= 69 {
        1900 + yy
    } else {
        2000 + yy
    }
}

fn digits(b: &[u8], pos: &mut usize, min: usize, max: usize) -> Option<u32> {
    let start = *pos;
    let mut v: u32 = 0;
    while *pos < b.len() && *pos - start < max && b[*pos].is_ascii_digit() {
        v = v * 10 + u32::from(b[*pos] - b'0');
        *pos += 1;
    }
    (*pos - start >= min).then_some(v)
}

fn parse_fast(toks: &[Tok], b: &[u8]) -> Option<i64> {
    let (mut y, mut mo, mut d, mut h, mut mi, mut s, mut ms) = (1970i64, 1u32, 1u32, 0u32, 0u32, 0u32, 0u32);
    let mut p = 0;
    for t in toks {
        match t {
            Tok::Year4 => y = i64::from(digits(b, &mut p, 4, 4)?),
            Tok::Year2 => y = century_of(digits(b, &mut p, 2, 2)?),
            Tok::Month => mo = digits(b, &mut p, 1, 2)?,
            Tok::Day => d = digits(b, &mut p, 1, 2)?,
            Tok::Hour => h = digits(b, &mut p, 1, 2)?,
            Tok::Minute => mi = digits(b, &mut p, 1, 2)?,
            Tok::Second => s = digits(b, &mut p, 1, 2)?,
            Tok::Fraction => {
                if p < b.len() && b[p] == b'.' {
                    p += 1;
                    let start = p;
                    let mut frac = 0u32;
                    while p < b.len() && b[p].is_ascii_digit() {
                        if p - start < 3 {
                            frac = frac * 10 + u32::from(b[p] - b'0');
                        }
                        p += 1;
                    }
                    if p == start {
                        return None;
                    }
                    for _ in (p - start).min(3)..3 {
                        frac *= 10;
                    }
                    ms = frac;
                }
            }
            Tok::Lit(c) => {
                if p < b.len() && b[p] == *c {
                    p += 1;
                } else {
                    return None;
                }
            }
        }
    }
    if p != b.len() {
        return None;
    }
    wall_ms(y, mo, d, h, mi, s, ms)
}

/// Parses with the first format that fits.
pub fn parse_any(formats: &[TimeFormat], s: &str) -> Option<i64> {
    formats.iter().find_map(|f| f.parse(s))
}

/// [`parse_any`] with one [`DayCache`] per format (`caches` as long as `formats`).
pub fn parse_any_cached(formats: &[TimeFormat], s: &str, caches: &mut [DayCache]) -> Option<i64> {
    formats
        .iter()
        .zip(caches.iter_mut())
        .find_map(|(f, c)| f.parse_cached(s, c))
}

/// A time zone: a fixed offset or an IANA zone (tz database compiled in via chrono-tz).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Zone {
    /// Fixed offset east of UTC, in seconds.
    Fixed(i32),
    /// An IANA zone with its daylight-saving rules.
    Iana(chrono_tz::Tz),
}

impl Zone {
    /// Parses `UTC`, `Z`, `+01:00`, `-0530`, `UTC+02:00` or an IANA name such as `Europe/Berlin`.
    pub fn parse(s: &str) -> Result<Self, String> {
        let t = s.trim();
        if t.eq_ignore_ascii_case("utc") || t == "Z" {
            return Ok(Zone::Fixed(0));
        }
        let off = t.strip_prefix("UTC").unwrap_or(t);
        if let Some(sign) = off.chars().next().filter(|c| *c == '+' || *c == '-') {
            let rest: String = off[1..].chars().filter(|c| *c != ':').collect();
            let ok = rest.len() == 4 && rest.chars().all(|c| c.is_ascii_digit());
            if !ok {
                return Err(format!("offset \"{s}\" is not of the form +HH:MM"));
            }
            let (h, m): (i32, i32) = (rest[..2].parse().unwrap_or(99), rest[2..].parse().unwrap_or(99));
            if h > 14 || m > 59 {
                return Err(format!("offset \"{s}\" is out of range"));
            }
            let secs = (h * 3600 + m * 60) * if sign == '-' { -1 } else { 1 };
            return Ok(Zone::Fixed(secs));
        }
        t.parse::<chrono_tz::Tz>().map(Zone::Iana).map_err(|_| {
            format!(
                "unknown time zone \"{s}\": give an IANA name such as Europe/Berlin, or a fixed offset such as +01:00"
            )
        })
    }

    /// A name polars understands for the output column, when there is one.
    pub fn polars_name(&self) -> Option<String> {
        match self {
            Zone::Fixed(0) => Some("UTC".into()),
            Zone::Fixed(secs) if secs % 3600 == 0 => {
                // the Etc/GMT zones have the POSIX sign: Etc/GMT-1 is UTC+01:00
                let h = -secs / 3600;
                Some(if h > 0 {
                    format!("Etc/GMT+{h}")
                } else {
                    format!("Etc/GMT{h}")
                })
            }
            Zone::Fixed(_) => None,
            Zone::Iana(tz) => Some(tz.name().to_string()),
        }
    }

    /// The zone's offset (s) at a UTC instant (ms).
    pub fn offset_at_utc(&self, utc_ms: i64) -> i32 {
        use chrono::Offset;
        match self {
            Zone::Fixed(s) => *s,
            Zone::Iana(tz) => {
                let dt = chrono::DateTime::from_timestamp_millis(utc_ms)
                    .unwrap_or_default()
                    .naive_utc();
                tz.offset_from_utc_datetime(&dt).fix().local_minus_utc()
            }
        }
    }

    fn resolve_exact(&self, wall_ms: i64) -> Resolved {
        match self {
            Zone::Fixed(s) => Resolved::Unique(wall_ms - i64::from(*s) * 1000),
            Zone::Iana(tz) => {
                let Some(naive) = chrono::DateTime::from_timestamp_millis(wall_ms).map(|d| d.naive_utc()) else {
                    return Resolved::Nonexistent;
                };
                match tz.from_local_datetime(&naive) {
                    LocalResult::Single(dt) => Resolved::Unique(dt.timestamp_millis()),
                    LocalResult::Ambiguous(a, b) => Resolved::Ambiguous(a.timestamp_millis(), b.timestamp_millis()),
                    LocalResult::None => Resolved::Nonexistent,
                }
            }
        }
    }
}

/// How one local time maps to instants.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Resolved {
    /// One instant (UTC ms).
    Unique(i64),
    /// Two instants: earlier (summer time) and later (standard time).
    Ambiguous(i64, i64),
    /// The local time was skipped by a clock change.
    Nonexistent,
}

/// What happened to a row's time.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeNote {
    /// Parsed and unique.
    Ok,
    /// The text did not match any format.
    Unparsed,
    /// A local time skipped by the spring clock change.
    Nonexistent,
    /// A repeated local time taken as the earlier instant.
    AmbiguousEarlier,
    /// A repeated local time taken as the later instant.
    AmbiguousLater,
}

/// Marks a missing time in the `i64` time arrays.
pub const NO_TIME: i64 = i64::MIN;

/// Maps local wall-clock times (ms, [`NO_TIME`] where unread) to UTC instants in file order with
/// the daylight-saving rule of the module documentation; returns the instants and one note per
/// row. See [`resolve_in_place`], which this wraps.
pub fn resolve(zone: &Zone, wall: &[i64]) -> (Vec<i64>, Vec<TimeNote>) {
    let mut utc = wall.to_vec();
    let (_, sparse) = resolve_in_place(zone, &mut utc);
    let mut notes = vec![TimeNote::Ok; wall.len()];
    for (i, n) in sparse {
        notes[i] = n;
    }
    (utc, notes)
}

/// Turns local wall-clock times (ms, [`NO_TIME`] where unread) into UTC instants in place, in
/// file order, with the daylight-saving rule of the module documentation. Returns the local
/// calendar day of every row ([`LocalDays`]) and the rows that needed a note, as (row, note);
/// every row not listed resolved to one instant. Local hours whose start and end map to the
/// same offset are resolved once and reused, so long series cost little.
///
/// Long series are resolved in two halves at once. The second half starts at a row whose time
/// maps to one instant: there the rule starts afresh in file order too, so the result is the
/// same as in one pass (tested).
pub fn resolve_in_place(zone: &Zone, times: &mut [i64]) -> (LocalDays, Vec<(usize, TimeNote)>) {
    let order = FileOrder::of(times);
    // a file out of order keeps its wall times for the repeated hour's second look
    let wall = order.shuffled.then(|| times.to_vec());
    let (days, mut notes) = if order.newest_first {
        // a newest-first export: the rule runs in time order, so from the file's end
        times.reverse();
        let (mut days, notes) = resolve_split(zone, times, 1 << 20);
        times.reverse();
        days.reverse();
        let n = times.len();
        let mut notes: Vec<(usize, TimeNote)> = notes.into_iter().map(|(i, note)| (n - 1 - i, note)).collect();
        notes.reverse();
        (days, notes)
    } else {
        resolve_split(zone, times, 1 << 20)
    };
    let mut days = LocalDays(days);
    if let Some(wall) = wall {
        repeated_hour_by_occurrence(zone, &wall, times, &mut days, &mut notes);
    }
    (days, notes)
}

/// Each row's local calendar day (days since 1970-01-01 on the local clock), kept as its
/// difference from the UTC day of the row's instant: a byte per row instead of four (a UTC
/// offset is less than a day, so the difference is −1, 0 or +1). Rows without an instant have
/// no day.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct LocalDays(Vec<i8>);

impl LocalDays {
    /// The local day of row `i`, whose instant is `utc_ms` (not [`NO_TIME`]).
    #[inline]
    pub fn day(&self, i: usize, utc_ms: i64) -> i64 {
        utc_ms.div_euclid(MS_PER_DAY) + i64::from(self.0[i])
    }

    /// Adds a row: its instant and the zone's offset (s) then.
    pub fn push(&mut self, utc_ms: i64, offset_s: i32) {
        let day = (utc_ms + i64::from(offset_s) * 1000).div_euclid(MS_PER_DAY);
        self.0.push(Self::difference(day, utc_ms));
    }

    /// Rows.
    pub fn len(&self) -> usize {
        self.0.len()
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// Local day `day` of instant `utc_ms` as its difference from the UTC day.
    #[inline]
    fn difference(day: i64, utc_ms: i64) -> i8 {
        let d = day - utc_ms.div_euclid(MS_PER_DAY);
        debug_assert!(d.abs() <= 1, "a UTC offset is less than a day");
        d as i8
    }
}

/// How a file's readable wall-clock times run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FileOrder {
    /// More steps back than forward, and not out of order: newest first.
    pub newest_first: bool,
    /// More steps against the file's direction than a clock change or a few joined downloads
    /// make (more than 10, and more than 1 % of the rows): out of order.
    pub shuffled: bool,
}

impl FileOrder {
    /// Looks at every step between consecutive readable times.
    pub fn of(wall: &[i64]) -> Self {
        let (mut forward, mut backward, mut readable) = (0usize, 0usize, 0usize);
        let mut last = NO_TIME;
        for &w in wall.iter().filter(|w| **w != NO_TIME) {
            readable += 1;
            if last != NO_TIME {
                forward += usize::from(w > last);
                backward += usize::from(w < last);
            }
            last = w;
        }
        let against = forward.min(backward);
        let shuffled = against > 10 && against * 100 > readable;
        Self {
            newest_first: backward > forward && !shuffled,
            shuffled,
        }
    }
}

/// Whether the readings run newest first (see [`FileOrder`]).
pub fn is_newest_first(wall: &[i64]) -> bool {
    FileOrder::of(wall).newest_first
}

/// In a file out of order the clock cannot be seen to step back, so the repeated hour's readings
/// are told apart by occurrence instead: of the rows with one repeated local time, in file order,
/// the first, third, … are taken as summer time and the second, fourth, … as standard time.
/// Notes, and the local days' differences from the UTC day, change with them.
fn repeated_hour_by_occurrence(
    zone: &Zone,
    wall: &[i64],
    utc: &mut [i64],
    days: &mut LocalDays,
    notes: &mut [(usize, TimeNote)],
) {
    use std::collections::HashMap;
    let mut seen: HashMap<i64, usize> = HashMap::new();
    let ambiguous: Vec<usize> = (0..notes.len())
        .filter(|&k| matches!(notes[k].1, TimeNote::AmbiguousEarlier | TimeNote::AmbiguousLater))
        .collect();
    for k in ambiguous {
        let row = notes[k].0;
        let Resolved::Ambiguous(early, late) = zone.resolve_exact(wall[row]) else {
            continue;
        };
        let n = seen.entry(wall[row]).or_insert(0);
        let (t, note) = if n.is_multiple_of(2) {
            (early, TimeNote::AmbiguousEarlier)
        } else {
            (late, TimeNote::AmbiguousLater)
        };
        *n += 1;
        utc[row] = t;
        days.0[row] = LocalDays::difference(wall_day(wall[row]), t);
        notes[k].1 = note;
    }
}

/// The UTC instant (ms) at which local calendar day `day` (days since 1970-01-01 on the local
/// clock) begins: its first existing local time from midnight on, the earlier instant where
/// midnight occurs twice.
pub fn local_day_start_utc(zone: &Zone, day: i64) -> i64 {
    let midnight = day * MS_PER_DAY;
    // a clock change at midnight skips at most a few hours; look a quarter-hour at a time
    for k in 0..=24 * 4 {
        match zone.resolve_exact(midnight + k * 15 * 60_000) {
            Resolved::Unique(t) | Resolved::Ambiguous(t, _) => return t,
            Resolved::Nonexistent => continue,
        }
    }
    midnight
}

fn resolve_split(zone: &Zone, times: &mut [i64], min_split: usize) -> (Vec<i8>, Vec<(usize, TimeNote)>) {
    let two = std::thread::available_parallelism().is_ok_and(|t| t.get() > 1);
    let mid = if two && times.len() >= min_split {
        times.len() / 2
    } else {
        times.len()
    };
    resolve_from(zone, times, mid)
}

/// Resolves `times` in two halves, the second from the first row at or after `mid` that maps to
/// one instant (in one pass when there is none).
fn resolve_from(zone: &Zone, times: &mut [i64], mid: usize) -> (Vec<i8>, Vec<(usize, TimeNote)>) {
    let n = times.len();
    let mut days = vec![0i8; n];
    let mut mid = mid;
    while mid < n && !(times[mid] != NO_TIME && matches!(zone.resolve_exact(times[mid]), Resolved::Unique(_))) {
        mid += 1;
    }
    if mid >= n {
        let notes = resolve_part(zone, times, &mut days, 0);
        return (days, notes);
    }
    let (ta, tb) = times.split_at_mut(mid);
    let (da, db) = days.split_at_mut(mid);
    let (mut notes, later) = std::thread::scope(|scope| {
        let second = scope.spawn(|| resolve_part(zone, tb, db, mid));
        let first = resolve_part(zone, ta, da, 0);
        (first, second.join().expect("resolving times does not panic"))
    });
    notes.extend(later);
    (days, notes)
}

fn resolve_part(zone: &Zone, times: &mut [i64], days: &mut [i8], first: usize) -> Vec<(usize, TimeNote)> {
    let mut notes = Vec::new();
    let mut cached: Option<(i64, i64)> = None; // (local hour, offset ms) of an unambiguous hour
    let mut prev_ambiguous: Option<i64> = None;
    let mut second_pass = false;
    for (k, (slot, day)) in times.iter_mut().zip(days.iter_mut()).enumerate() {
        let i = first + k;
        let w = *slot;
        if w == NO_TIME {
            notes.push((i, TimeNote::Unparsed));
            continue;
        }
        let hour = w.div_euclid(MS_PER_HOUR);
        let resolved = match (zone, cached) {
            (Zone::Fixed(s), _) => Resolved::Unique(w - i64::from(*s) * 1000),
            (_, Some((h, off))) if h == hour => Resolved::Unique(w - off),
            _ => {
                let (h0, h1) = (hour * MS_PER_HOUR, hour * MS_PER_HOUR + MS_PER_HOUR - 1);
                match (zone.resolve_exact(h0), zone.resolve_exact(h1)) {
                    (Resolved::Unique(ua), Resolved::Unique(ub)) if h0 - ua == h1 - ub => {
                        cached = Some((hour, h0 - ua));
                        Resolved::Unique(w - (h0 - ua))
                    }
                    _ => zone.resolve_exact(w),
                }
            }
        };
        *slot = match resolved {
            Resolved::Unique(t) => {
                prev_ambiguous = None;
                second_pass = false;
                t
            }
            Resolved::Nonexistent => {
                notes.push((i, TimeNote::Nonexistent));
                NO_TIME
            }
            Resolved::Ambiguous(early, late) => {
                if prev_ambiguous.is_some_and(|p| w < p) {
                    second_pass = true;
                }
                prev_ambiguous = Some(w);
                if second_pass {
                    notes.push((i, TimeNote::AmbiguousLater));
                    late
                } else {
                    notes.push((i, TimeNote::AmbiguousEarlier));
                    early
                }
            }
        };
        if *slot != NO_TIME {
            *day = LocalDays::difference(wall_day(w), *slot);
        }
    }
    notes
}

/// Local calendar day (days since 1970-01-01 on the local clock) of a wall-clock time.
pub fn wall_day(wall_ms: i64) -> i64 {
    wall_ms.div_euclid(MS_PER_DAY)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_day_round_trip() {
        // analytic: 2000-03-01 is day 11017; 1970-01-01 is day 0
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        for z in [-800_000, -1, 0, 59, 11_016, 19_000, 2_000_000] {
            let (y, m, d) = civil_from_days(z);
            assert_eq!(days_from_civil(y, m, d), z);
        }
    }

    #[test]
    fn fast_parser_matches_chrono() {
        let f = TimeFormat::new("%Y-%m-%d %H:%M:%S");
        let t = f.parse("2024-10-27 02:30:15").expect("parses");
        let c = NaiveDateTime::parse_from_str("2024-10-27 02:30:15", "%Y-%m-%d %H:%M:%S").expect("chrono");
        assert_eq!(t, c.and_utc().timestamp_millis());
        assert_eq!(
            TimeFormat::new("%d.%m.%Y %H:%M").parse("27.10.2024 02:30"),
            Some(t - 15_000)
        );
        assert!(f.parse("2024-02-30 00:00:00").is_none(), "no 30 February");
        assert!(f.parse("garbage").is_none());
        assert!(f.parse("2024-10-27 02:30:15 extra").is_none());
        let frac = TimeFormat::new("%Y-%m-%dT%H:%M:%S%.f");
        assert_eq!(frac.parse("2024-10-27T02:30:15.25"), Some(t + 250));
        assert_eq!(frac.parse("2024-10-27T02:30:15"), Some(t));
        // a format the fast path does not know goes to chrono
        assert_eq!(
            TimeFormat::new("%b %d %Y %H:%M").parse("Oct 27 2024 02:30"),
            Some(t - 15_000)
        );
    }

    /// The fixed-width shortcut gives what chrono's parser gives (general-purpose reference
    /// library), and turns down nothing the general fast parser accepts.
    #[test]
    fn fixed_width_shortcut_agrees_with_chrono_and_the_general_parser() {
        let texts = [
            "2024-10-27 02:30",
            "2024-02-29 23:59",
            "2023-02-29 12:00",
            "2024-13-01 00:00",
            "2024-12-31 24:00",
            "2024-1-05 07:00",
            " 2024-10-27 02:30 ",
            "2024-10-27T02:30",
            "2024-10-27 02:3x",
            "0999-01-01 00:00",
            "27.10.24 02:30",
            "01.01.70 00:00",
            "01.01.68 00:00",
        ];
        // (two-digit years: "69" alone differs, POSIX strptime gives 1969 and chrono 2069;
        // flumerate follows POSIX, as the parser's comment says)
        for fmt in ["%Y-%m-%d %H:%M", "%d.%m.%y %H:%M"] {
            let f = TimeFormat::new(fmt);
            assert!(f.fixed.is_some(), "{fmt} has a fixed width");
            let general = TimeFormat {
                fixed: None,
                ..f.clone()
            };
            for t in texts {
                let ours = f.parse(t);
                assert_eq!(ours, general.parse(t), "{fmt} {t:?}");
                let chrono = NaiveDateTime::parse_from_str(t.trim(), fmt)
                    .ok()
                    .map(|d| d.and_utc().timestamp_millis());
                if ours.is_some() {
                    assert_eq!(ours, chrono, "{fmt} {t:?}");
                }
            }
        }
        assert!(TimeFormat::new("%Y-%m-%dT%H:%M:%S%.f").fixed.is_none());
        // with a day cache, in sequence (same dates, a new date, bad clock fields): the same
        for fmt in ["%Y-%m-%d %H:%M", "%d.%m.%y %H:%M", "%H:%M %Y-%m-%d"] {
            let f = TimeFormat::new(fmt);
            let mut cache = DayCache::default();
            for t in texts
                .iter()
                .chain(&texts)
                .chain(&["2024-10-27 23:59", "2024-10-27 24:00", "2024-10-27 1x:00"])
            {
                assert_eq!(f.parse_cached(t, &mut cache), f.parse(t), "{fmt} {t:?}");
            }
        }
    }

    /// Resolving in two halves gives what one pass gives, wherever the halves meet: a series
    /// crossing both Europe/Berlin clock changes of 2024 (IANA tz database), with unread times,
    /// split at every row.
    #[test]
    fn resolving_in_two_halves_equals_one_pass() {
        let zone = Zone::parse("Europe/Berlin").expect("zone");
        let f = TimeFormat::new("%Y-%m-%d %H:%M");
        let mut wall: Vec<i64> = Vec::new();
        for text in [
            "2024-03-31 01:30",
            "2024-03-31 02:00",
            "2024-03-31 02:30",
            "2024-03-31 03:00",
            "2024-10-27 01:30",
            "2024-10-27 02:00",
            "2024-10-27 02:30",
            "2024-10-27 02:00",
            "2024-10-27 02:30",
            "2024-10-27 03:00",
            "2024-10-27 03:30",
        ] {
            wall.push(f.parse(text).expect("parses"));
            wall.push(NO_TIME);
        }
        let mut one = wall.clone();
        let mut days_one = vec![0i8; one.len()];
        let notes_one = resolve_part(&zone, &mut one, &mut days_one, 0);
        assert!(notes_one.iter().any(|n| n.1 == TimeNote::AmbiguousLater));
        for mid in 0..=wall.len() {
            let mut two = wall.clone();
            let (days, notes) = resolve_from(&zone, &mut two, mid);
            assert_eq!(two, one, "split at or after row {mid}");
            assert_eq!(days, days_one, "split at or after row {mid}");
            assert_eq!(notes, notes_one, "split at or after row {mid}");
        }
    }

    /// Unknown strftime directives are named (chrono's strftime items are the reference).
    #[test]
    fn unknown_directives_are_named() {
        assert!(TimeFormat::check("%Y-%m-%d %H:%M:%S%.f").is_ok());
        assert!(TimeFormat::check("%d.%m.%y %-H:%M").is_ok());
        assert!(TimeFormat::check("%b %d %Y").is_ok());
        let e = TimeFormat::check("%Y-%m-%d %Q").expect_err("unknown");
        assert!(e.contains("%Q"), "{e}");
        assert!(TimeFormat::check("%Y %").is_err(), "a lone % at the end");
        assert!(TimeFormat::check("  ").is_err());
    }

    #[test]
    fn zones_parse() {
        assert_eq!(Zone::parse("+01:00"), Ok(Zone::Fixed(3600)));
        assert_eq!(Zone::parse("UTC-05:30"), Ok(Zone::Fixed(-19_800)));
        assert!(matches!(Zone::parse("Europe/Berlin"), Ok(Zone::Iana(_))));
        assert!(Zone::parse("Mars/Olympus").is_err());
        assert_eq!(Zone::Fixed(3600).polars_name().as_deref(), Some("Etc/GMT-1"));
    }

    #[test]
    fn daylight_saving_gap_and_overlap_follow_the_rule() {
        // Europe/Berlin (IANA tz database): 2024-03-31 02:00 → 03:00 (gap);
        // 2024-10-27 03:00 CEST → 02:00 CET (02:00–02:59 occur twice)
        let zone = Zone::parse("Europe/Berlin").expect("zone");
        let f = TimeFormat::new("%Y-%m-%d %H:%M");
        let wall: Vec<i64> = [
            "2024-03-31 01:45",
            "2024-03-31 02:15",
            "2024-03-31 03:00",
            "2024-10-27 02:00",
            "2024-10-27 02:30",
            "2024-10-27 02:00",
            "2024-10-27 02:30",
            "2024-10-27 03:00",
        ]
        .iter()
        .map(|s| f.parse(s).expect("parses"))
        .collect();
        let (utc, notes) = resolve(&zone, &wall);
        assert_eq!(notes[1], TimeNote::Nonexistent);
        assert_eq!(utc[1], NO_TIME);
        // 01:45 CET = 00:45 UTC; 03:00 CEST = 01:00 UTC
        assert_eq!(utc[2] - utc[0], 15 * 60_000);
        assert_eq!(notes[3], TimeNote::AmbiguousEarlier);
        assert_eq!(notes[4], TimeNote::AmbiguousEarlier);
        assert_eq!(notes[5], TimeNote::AmbiguousLater);
        assert_eq!(notes[6], TimeNote::AmbiguousLater);
        // 02:00 CEST = 00:00 UTC, 02:00 CET = 01:00 UTC, 03:00 CET = 02:00 UTC
        assert_eq!(utc[5] - utc[3], 3_600_000);
        assert_eq!(utc[7] - utc[6], 30 * 60_000);
    }

    /// Each row's local day, kept as a difference from the UTC day of its instant, is the day of
    /// its wall-clock time (IANA tz database): in zones whose clock changes at midnight
    /// (America/Sao_Paulo: 2018-11-04 00:00 → 01:00, 2019-02-17 00:00 → 2019-02-16 23:00), by
    /// half an hour (Australia/Lord_Howe), far from UTC (Pacific/Kiritimati +14,
    /// Pacific/Pago_Pago −11) or at 00:00 UTC, so that a repeated hour's two readings fall on
    /// two UTC days (Europe/Minsk, 2000-10-29 03:00 → 02:00), and with files in order, newest
    /// first and shuffled.
    #[test]
    fn local_days_are_the_wall_clock_days() {
        let twenty_minutes = |from: i64, days: i64| (0..days * 72).map(move |k| from * MS_PER_DAY + k * 20 * 60_000);
        let steps: Vec<i64> = twenty_minutes(days_from_civil(2000, 10, 25), 8)
            .chain(twenty_minutes(days_from_civil(2018, 10, 28), 165))
            .collect();
        let shuffle = |v: &[i64]| {
            let mut v = v.to_vec();
            let mut x: u64 = 12_345;
            for i in (1..v.len()).rev() {
                // a linear congruential generator (Knuth's MMIX constants) for a fixed shuffle
                x = x
                    .wrapping_mul(6_364_136_223_846_793_005)
                    .wrapping_add(1_442_695_040_888_963_407);
                v.swap(i, (x >> 33) as usize % (i + 1));
            }
            v
        };
        for name in [
            "America/Sao_Paulo",
            "Australia/Lord_Howe",
            "Pacific/Kiritimati",
            "Pacific/Pago_Pago",
            "Europe/Berlin",
            "Europe/Minsk",
        ] {
            let zone = Zone::parse(name).expect("zone");
            // wall clocks every 20 minutes (some in a skipped hour), and a logger's clock every
            // 20 minutes of real time (a repeated hour read twice)
            let logger: Vec<i64> = steps
                .iter()
                .map(|&t| t + i64::from(zone.offset_at_utc(t)) * 1000)
                .collect();
            let backward = |v: &[i64]| v.iter().rev().copied().collect::<Vec<i64>>();
            let files = [
                steps.clone(),
                backward(&steps),
                shuffle(&steps),
                logger.clone(),
                backward(&logger),
                shuffle(&logger),
            ];
            for (k, wall) in files.iter().enumerate() {
                let mut utc = wall.clone();
                let (days, notes) = resolve_in_place(&zone, &mut utc);
                assert_eq!(days.len(), wall.len());
                let resolved = (0..wall.len()).filter(|&i| utc[i] != NO_TIME);
                for i in resolved {
                    assert_eq!(days.day(i, utc[i]), wall_day(wall[i]), "{name}, row {i}");
                }
                if name == "America/Sao_Paulo" && k < 3 {
                    assert!(notes.iter().any(|n| n.1 == TimeNote::Nonexistent), "the skipped hour");
                }
                if name == "America/Sao_Paulo" || name == "Europe/Minsk" {
                    let repeated =
                        |n: &(usize, TimeNote)| matches!(n.1, TimeNote::AmbiguousEarlier | TimeNote::AmbiguousLater);
                    assert!(notes.iter().any(repeated), "the repeated hour");
                }
            }
        }
    }
}
