// Dates and calendar terms: d (days since 1970-01-01) of ISO dates, ISO weeks
// and months, and the day of the week, against Python's datetime
// (test/fixtures/scipy/calendar_runner.py); malformed dates are refused with
// their row and value; the generated columns follow their definitions.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { calendarTerms, daysOf, parseDay, withCalendarColumns } from "../../src/design/calendar.js";
import { parseTable } from "../../src/io/csv.js";
import { FIXTURES, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "calendar_expected.json"), "utf8"));

test("parseDay gives Python datetime's days since 1970-01-01 for dates, ISO weeks (Monday) and months (first day)", () => {
  for (const [text, d] of Object.entries(ref.days)) assert.deepEqual(parseDay(text), { day: d }, text);
  for (const bad of ref.bad_dates) assert.ok("reason" in parseDay(bad), bad);
});

test("day_of_week is Monday-first as datetime.weekday(), in calendar order; trend and harmonics as defined", () => {
  const dates = Object.keys(ref.weekday_of);
  const table = parseTable(Buffer.from(`date,y\n${dates.map((d) => `${d},1`).join("\n")}\n`), { source: "t.csv" });
  const { days, daily } = daysOf(table, "date");
  const o = { column: "date", trend: true, season: 2, dayOfWeek: true };
  assert.deepEqual(calendarTerms(o), [
    "trend",
    "season_sin1",
    "season_cos1",
    "season_sin2",
    "season_cos2",
    "day_of_week",
  ]);
  const t = withCalendarColumns(table, o, days, 0, daily);
  const dow = t.columns.get("day_of_week");
  assert.ok(dow?.kind === "factor");
  const names = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"];
  dates.forEach((d, i) => {
    assert.equal(dow.levels[dow.codes[i]], names[ref.weekday_of[d]], d);
  });
  assert.deepEqual(
    dow.levels,
    names.filter((n) => dow.levels.includes(n)),
    "calendar order",
  );
  const trend = t.columns.get("trend");
  const cos2 = t.columns.get("season_cos2");
  assert.ok(trend?.kind === "numeric" && cos2?.kind === "numeric");
  dates.forEach((_, i) => {
    assert.equal(trend.values[i], days[i] / 365.25);
    assert.equal(cos2.values[i], Math.cos((2 * Math.PI * 2 * days[i]) / 365.25));
  });
});

test("a malformed date is refused with its file row, column and value (exit 2); calendar options need --date", () => {
  const csv = "date,hours,visits\n2026-01-05,8,3\n2026-02-30,8,4\n";
  const r = runCli(["fit", "-", "--model", "visits ~ 1", "--exposure", "hours", "--date", "date", "--trend"], csv);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /row 3, column 'date', value '2026-02-30': there is no day 30 in month 02 of 2026/);
  const w = runCli(
    ["fit", "-", "--model", "visits ~ 1", "--date", "date", "--day-of-week"],
    "date,visits\n2026-W02,3\n2026-W03,4\n",
  );
  assert.equal(w.code, 2);
  assert.match(w.stderr, /--day-of-week needs daily dates/);
  const orphan = runCli(["fit", "-", "--model", "visits ~ 1", "--season", "2"], csv);
  assert.equal(orphan.code, 2);
  assert.match(orphan.stderr, /--season makes its terms from the dates: give the date column with --date COL/);
  const clash = runCli(
    ["fit", "-", "--model", "visits ~ 1", "--date", "date", "--trend"],
    "date,trend,visits\n2026-01-05,1,3\n2026-01-06,2,4\n",
  );
  assert.equal(clash.code, 2);
  assert.match(clash.stderr, /already has a column 'trend'/);
});
