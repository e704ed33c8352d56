// Calendar terms generated from a date column (--date): a trend in years
// since the first date used (--trend), K pairs of annual harmonics
// (--season K) and a day-of-week factor (--day-of-week). They are columns of
// the table like any other, so the model string may also name them (in
// interactions, for example). d is the date's days since 1970-01-01.
import { InputError } from "../errors.js";
import type { Column, FactorColumn, NumericColumn, Table } from "../io/table.js";
import type { ModelFile } from "../io/model-file.js";
import { fileRow } from "../io/table.js";

export interface CalendarOptions {
  /** The date column: YYYY-MM-DD, YYYY-Www (the week's Monday) or YYYY-MM (the first day). */
  column: string;
  trend: boolean;
  /** Number of harmonic pairs (0: none). */
  season: number;
  dayOfWeek: boolean;
}

/** What a model records of its calendar terms, so that predict can make them for new rows. */
export interface Calendar extends CalendarOptions {
  /** d of the earliest date among the rows used (trend = 0 there). */
  firstDay: number;
  /** d of the latest date among the rows used. */
  lastDay: number;
}

export const YEAR_DAYS = 365.25;
export const DAY_NAMES = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"] as const;
export const MAX_HARMONICS = 6;

const DAY_MS = 86_400_000;

/** YYYY-MM-DD of d days since 1970-01-01. */
export function isoDate(d: number): string {
  return new Date(d * DAY_MS).toISOString().slice(0, 10);
}

/** The names of the generated columns, in the order they join the model. */
export function calendarTerms(o: CalendarOptions): string[] {
  const out: string[] = [];
  if (o.trend) out.push("trend");
  for (let k = 1; k <= o.season; k++) out.push(`season_sin${k}`, `season_cos${k}`);
  if (o.dayOfWeek) out.push("day_of_week");
  return out;
}

/** The Monday of ISO week w of year y (ISO 8601: week 1 holds the year's first Thursday), as d. */
function isoWeekMonday(y: number, w: number): number {
  const jan4 = Date.UTC(y, 0, 4) / DAY_MS;
  const jan4Weekday = (new Date(jan4 * DAY_MS).getUTCDay() + 6) % 7; // Monday 0
  return jan4 - jan4Weekday + (w - 1) * 7;
}

function isoWeeksIn(y: number): number {
  // A year has 53 ISO weeks when 28 December falls in week 53.
  const dec28 = Date.UTC(y, 11, 28) / DAY_MS;
  return Math.round((dec28 - isoWeekMonday(y, 1)) / 7) + 1;
}

/** d for a date text, or a reason it is not one. */
export function parseDay(text: string): { day: number } | { reason: string } {
  let m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(text);
  if (m) {
    const [y, mo, d] = [+m[1], +m[2], +m[3]];
    const t = Date.UTC(y, mo - 1, d);
    const back = new Date(t);
    if (mo < 1 || mo > 12 || back.getUTCMonth() !== mo - 1 || back.getUTCDate() !== d)
      return { reason: `there is no day ${m[3]} in month ${m[2]} of ${m[1]}` };
    return { day: t / DAY_MS };
  }
  m = /^(\d{4})-W(\d{2})$/.exec(text);
  if (m) {
    const [y, w] = [+m[1], +m[2]];
    if (w < 1 || w > isoWeeksIn(y)) return { reason: `${m[1]} has ISO weeks 01 to ${isoWeeksIn(y)}` };
    return { day: isoWeekMonday(y, w) };
  }
  m = /^(\d{4})-(\d{2})$/.exec(text);
  if (m) {
    const mo = +m[2];
    if (mo < 1 || mo > 12) return { reason: "the month must be 01 to 12" };
    return { day: Date.UTC(+m[1], mo - 1, 1) / DAY_MS };
  }
  return { reason: "not a date in the form YYYY-MM-DD, YYYY-Www or YYYY-MM" };
}

/** d of every row (NaN where the date is missing); a malformed date is an input error naming its row. */
export function daysOf(table: Table, column: string): { days: Float64Array; daily: boolean } {
  const c = table.columns.get(column);
  if (!c) throw new InputError(`${table.source}: --date column '${column}' is not in the file.`);
  const days = new Float64Array(table.nRows).fill(Number.NaN);
  if (c.kind === "numeric") {
    const i = c.values.findIndex((v) => !Number.isNaN(v));
    if (i >= 0)
      throw new InputError(
        `${table.source}, row ${fileRow(i)}, column '${column}', value '${c.values[i]}': --date needs dates in the form YYYY-MM-DD, YYYY-Www or YYYY-MM, not numbers.`,
      );
    return { days, daily: true };
  }
  const parsed = c.levels.map((l) => parseDay(l));
  let daily = true;
  for (let i = 0; i < table.nRows; i++) {
    const code = c.codes[i];
    if (code < 0) continue;
    const p = parsed[code];
    if ("reason" in p)
      throw new InputError(
        `${table.source}, row ${fileRow(i)}, column '${column}', value '${c.levels[code]}': ${p.reason}.`,
      );
    days[i] = p.day;
    if (c.levels[code].length !== 10) daily = false;
  }
  return { days, daily };
}

/**
 * The table with the calendar columns added, made from d and the first day
 * (trend = (d − firstDay)/365.25; season_sink = sin(2πk·d/365.25), season_cosk
 * likewise; day_of_week in calendar order, Monday first).
 */
export function withCalendarColumns(
  table: Table,
  o: CalendarOptions,
  days: Float64Array,
  firstDay: number,
  daily: boolean,
): Table {
  if (o.dayOfWeek && !daily)
    throw new InputError(
      `--day-of-week needs daily dates (YYYY-MM-DD) in '${o.column}'; weeks and months have no day of the week.`,
    );
  for (const name of calendarTerms(o))
    if (table.columns.has(name) || table.header.includes(name))
      throw new InputError(
        `${table.source}: the file already has a column '${name}', which the calendar options would make; rename it or leave out the option that makes it.`,
      );
  const columns = new Map<string, Column>(table.columns);
  const numeric = (name: string, f: (d: number) => number): NumericColumn => ({
    kind: "numeric",
    name,
    values: Float64Array.from(days, (d) => (Number.isNaN(d) ? Number.NaN : f(d))),
  });
  if (o.trend)
    columns.set(
      "trend",
      numeric("trend", (d) => (d - firstDay) / YEAR_DAYS),
    );
  for (let k = 1; k <= o.season; k++) {
    columns.set(
      `season_sin${k}`,
      numeric(`season_sin${k}`, (d) => Math.sin((2 * Math.PI * k * d) / YEAR_DAYS)),
    );
    columns.set(
      `season_cos${k}`,
      numeric(`season_cos${k}`, (d) => Math.cos((2 * Math.PI * k * d) / YEAR_DAYS)),
    );
  }
  if (o.dayOfWeek) {
    const present = new Set<number>();
    // 1970-01-01 was a Thursday: Monday-first weekday = (d + 3) mod 7.
    const weekday = Int32Array.from(days, (d) => (Number.isNaN(d) ? -1 : (((d + 3) % 7) + 7) % 7));
    for (const w of weekday) if (w >= 0) present.add(w);
    const levels = DAY_NAMES.filter((_, k) => present.has(k));
    const codeOf = DAY_NAMES.map((name) => levels.indexOf(name as (typeof levels)[number]));
    const col: FactorColumn = {
      kind: "factor",
      name: "day_of_week",
      codes: Int32Array.from(weekday, (w) => (w < 0 ? -1 : codeOf[w])),
      levels,
      reason: { forced: true },
    };
    columns.set("day_of_week", col);
  }
  return { ...table, columns, header: [...table.header, ...calendarTerms(o)] };
}

/** The model string with the generated terms it does not already name added at the end. */
export function withCalendarTerms(modelText: string, o: CalendarOptions, named: string[]): string {
  const extra = calendarTerms(o).filter((t) => !named.includes(t));
  return extra.length ? `${modelText} + ${extra.join(" + ")}` : modelText;
}

/** The first and last d among the rows (all rows when null), missing dates skipped ([0, 0] when none). */
export function dayRange(days: Float64Array, rows: Int32Array | null): [number, number] {
  let lo = Infinity,
    hi = -Infinity;
  const n = rows ? rows.length : days.length;
  for (let k = 0; k < n; k++) {
    const d = days[rows ? rows[k] : k];
    if (Number.isNaN(d)) continue;
    if (d < lo) lo = d;
    if (d > hi) hi = d;
  }
  return Number.isFinite(lo) ? [lo, hi] : [0, 0];
}

/** A model file's calendar record as the design stage uses it. */
export function calendarOfSaved(saved: NonNullable<ModelFile["calendar"]>): Calendar {
  const day = (t: string) => {
    const p = parseDay(t);
    if ("reason" in p)
      throw new InputError(`the model file's calendar date '${t}' is damaged: ${p.reason}; refit and save it again.`);
    return p.day;
  };
  return {
    column: saved.column,
    trend: saved.trend,
    season: saved.season,
    dayOfWeek: saved.day_of_week,
    firstDay: day(saved.first_date),
    lastDay: day(saved.last_date),
  };
}

/**
 * New rows with the model's calendar columns (predict): the trend counts from
 * the fit's first date. A missing date is an input error naming its row; rows
 * dated outside the fitted span give a warning (the trend is extrapolated).
 */
export function calendarForNewRows(table: Table, cal: Calendar): { table: Table; warnings: string[] } {
  const { days, daily } = daysOf(table, cal.column);
  const uses = calendarTerms(cal).length > 0;
  if (uses) {
    const i = days.findIndex((d) => Number.isNaN(d));
    if (i >= 0)
      throw new InputError(
        `${table.source}, row ${fileRow(i)}, column '${cal.column}': the date is missing; the model's calendar terms are made from it.`,
      );
  }
  const [lo, hi] = dayRange(days, null);
  const warnings: string[] = [];
  if (cal.trend && table.nRows > 0 && (lo < cal.firstDay || hi > cal.lastDay))
    warnings.push(
      `new rows are dated ${isoDate(lo)} to ${isoDate(hi)}, outside the fitted dates ${isoDate(cal.firstDay)} to ${isoDate(cal.lastDay)}: the trend is extrapolated there (by up to ${Math.round(Math.max(cal.firstDay - lo, hi - cal.lastDay, 0))} days)`,
    );
  return { table: uses ? withCalendarColumns(table, cal, days, cal.firstDay, daily) : table, warnings };
}
