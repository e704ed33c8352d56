#!/usr/bin/env node
// Writes the invented demo data sets in this folder from a fixed seed.
// Scenario (invented for tallyfit): a network of six walk-in clinics records
// visits per clinic-day with the hours it was open; a hospital records falls
// per ward-month with occupied bed-days; a regional network of thirty
// community clinics records two years of weekday visits, where counts of one
// clinic share its level and its run of busy or quiet weeks; and falls per
// ward-month where some months were never reported. Nothing here is real data.
//   node examples/generate.mjs          (after npm ci, which builds dist/) rewrites clinic_visits.csv,
//                                        clinic_visits_week49.csv, ward_falls.csv, clinic_network.csv and ward_reports.csv
import { writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
// The project's own seeded generator and samplers (built by npm ci / npm run build).
import {
  negbinDraw as negbin,
  normalDraw as normal,
  poissonDraw as poisson,
  uniformGenerator as rng,
} from "../dist/src/math/random.js";

const here = dirname(fileURLToPath(import.meta.url));

function clinicVisits(weeks = [1, 48], seed = 20261201, excess = null) {
  const u = rng(seed);
  const clinics = { northgate: 0, harbour: 0.18, riverside: -0.12, hillcrest: 0.05, old_town: 0.3, westfield: -0.25 };
  const weekdays = ["mon", "tue", "wed", "thu", "fri", "sat"];
  const dayEffect = { mon: 0.22, tue: 0.05, wed: 0, thu: 0.02, fri: 0.1, sat: -0.15 };
  const lines = ["date,week,weekday,clinic,open_hours,staff_on_duty,flu_season,visits"];
  const start = Date.UTC(2026, 0, 5); // a Monday
  for (let week = weeks[0]; week <= weeks[1]; week++) {
    for (let d = 0; d < 6; d++) {
      const date = new Date(start + ((week - 1) * 7 + d) * 86400000).toISOString().slice(0, 10);
      const flu = week <= 10 || week >= 44 ? 1 : 0;
      for (const [clinic, eff] of Object.entries(clinics)) {
        const wd = weekdays[d];
        let hours = wd === "sat" ? 5 : clinic === "old_town" ? 12 : 9 + Math.round(u() * 2);
        if (u() < 0.008) hours = 0; // closed for the day
        const staff = Math.max(1, Math.round(3 + (clinic === "harbour" ? 1 : 0) + normal(u) * 0.8));
        const rate = Math.exp(Math.log(2.1) + eff + dayEffect[wd] + 0.25 * flu + 0.04 * (staff - 3));
        const boost = excess && excess.clinic === clinic && excess.weekday === wd ? excess.factor : 1;
        const visits = hours === 0 ? 0 : negbin(u, boost * rate * hours, 0.04);
        let staffText = String(staff);
        if (!excess && u() < 0.004) staffText = "NA"; // staffing not recorded
        lines.push(`${date},${week},${wd},${clinic},${hours},${staffText},${flu},${visits}`);
      }
    }
  }
  return `${lines.join("\n")}\n`;
}

function wardFalls() {
  const u = rng(7);
  const wards = { general_medicine: 0, surgery: -0.45, rehab: 0.55, orthopaedics: 0.1, day_unit: -2.5 };
  const lines = ["month,ward,bed_days,staffing_ratio,falls"];
  for (let m = 1; m <= 24; m++) {
    const month = `${2025 + Math.floor((m - 1) / 12)}-${String(((m - 1) % 12) + 1).padStart(2, "0")}`;
    for (const [ward, eff] of Object.entries(wards)) {
      const beds = ward === "day_unit" ? 40 + Math.round(u() * 20) : 600 + Math.round(u() * 300);
      const ratio = +(0.9 + u() * 0.6).toFixed(2);
      const rate = (ward === "day_unit" ? 0 : 1) * Math.exp(Math.log(4.5 / 1000) + eff - 0.6 * (ratio - 1.2));
      lines.push(`${month},${ward},${beds},${ratio},${poisson(u, rate * beds)}`);
    }
  }
  return `${lines.join("\n")}\n`;
}

/** ISO 8601 week label (YYYY-Www) of a UTC date: the week of its Thursday. */
function isoWeek(t) {
  const d = new Date(t);
  const thursday = new Date(t + (3 - ((d.getUTCDay() + 6) % 7)) * 86400000);
  const jan1 = Date.UTC(thursday.getUTCFullYear(), 0, 1);
  const week = 1 + Math.floor((thursday.getTime() - jan1) / (7 * 86400000));
  return `${thursday.getUTCFullYear()}-W${String(week).padStart(2, "0")}`;
}

/**
 * Thirty clinics, weekdays from 6 January 2025 for 104 weeks. Each clinic has
 * its own level (normal, sd 0.25 on the log scale) and a run of busy or quiet
 * weeks (a first-order autoregressive week shock per clinic, coefficient 0.6,
 * sd 0.15); the whole network shares a week shock too (sd 0.08: weather,
 * school holidays). Half the clinics are walk-in only (about 15% more visits
 * per open hour); visits rise slowly (5% a year) and peak in winter.
 */
function clinicNetwork(seed = 20261202) {
  const u = rng(seed);
  const clinics = Array.from({ length: 30 }, (_, k) => ({
    name: `site_${String(k + 1).padStart(2, "0")}`,
    walkIn: k % 2 === 0 ? "yes" : "no",
    level: 0.25 * normal(u),
    shock: 0,
  }));
  const weekdays = ["mon", "tue", "wed", "thu", "fri"];
  const lines = ["date,week,weekday,clinic,walk_in_only,open_hours,visits"];
  const start = Date.UTC(2025, 0, 6); // a Monday
  for (let week = 0; week < 104; week++) {
    const shared = 0.08 * normal(u);
    for (const c of clinics) c.shock = 0.6 * c.shock + 0.15 * normal(u);
    for (let d = 0; d < 5; d++) {
      const t = start + (week * 7 + d) * 86400000;
      const date = new Date(t).toISOString().slice(0, 10);
      const dayOfYear = (t - Date.UTC(new Date(t).getUTCFullYear(), 0, 1)) / 86400000;
      const season = 0.18 * Math.cos((2 * Math.PI * (dayOfYear - 20)) / 365.25);
      const years = (week * 7 + d) / 365.25;
      for (const c of clinics) {
        const hours = d === 4 ? 6 : 8 + Math.floor(u() * 3);
        const rate = Math.exp(
          Math.log(1.6) +
            c.level +
            (c.walkIn === "yes" ? Math.log(1.15) : 0) +
            Math.log(1.05) * years +
            season +
            shared +
            c.shock,
        );
        lines.push(`${date},${isoWeek(t)},${weekdays[d]},${c.name},${c.walkIn},${hours},${poisson(u, rate * hours)}`);
      }
    }
  }
  return `${lines.join("\n")}\n`;
}

/**
 * Falls per ward-month over three years in 16 wards of four kinds; some
 * ward-months are never reported (the count reads 0), more often in small
 * units (about 30% of their months against 8%). Counts that are reported are
 * negative binomial (alpha 0.3) with the ward kind's rate per bed-day.
 */
function wardReports(seed = 20261205) {
  const u = rng(seed);
  const kinds = { medicine: 0, surgery: -0.35, rehab: 0.45, older_people: 0.6 };
  const wards = Array.from({ length: 16 }, (_, k) => ({
    name: `ward_${String(k + 1).padStart(2, "0")}`,
    kind: Object.keys(kinds)[k % 4],
    small: k % 3 === 0 ? "yes" : "no",
  }));
  const lines = ["month,ward,ward_type,small_unit,bed_days,falls"];
  for (let m = 0; m < 36; m++) {
    const month = `${2024 + Math.floor(m / 12)}-${String((m % 12) + 1).padStart(2, "0")}`;
    for (const w of wards) {
      const beds = (w.small === "yes" ? 250 : 650) + Math.round(u() * 150);
      const unreported = u() < (w.small === "yes" ? 0.3 : 0.08);
      const rate = Math.exp(Math.log(4 / 1000) + kinds[w.kind]);
      lines.push(`${month},${w.name},${w.kind},${w.small},${beds},${unreported ? 0 : negbin(u, rate * beds, 0.3)}`);
    }
  }
  return `${lines.join("\n")}\n`;
}

writeFileSync(join(here, "clinic_visits.csv"), clinicVisits());
// The next week, for the weekly prediction run: Harbour on Wednesday sees three times its usual rate.
writeFileSync(
  join(here, "clinic_visits_week49.csv"),
  clinicVisits([49, 49], 49, { clinic: "harbour", weekday: "wed", factor: 3 }),
);
writeFileSync(join(here, "ward_falls.csv"), wardFalls());
writeFileSync(join(here, "clinic_network.csv"), clinicNetwork());
writeFileSync(join(here, "ward_reports.csv"), wardReports());
console.log(
  "wrote examples/clinic_visits.csv, clinic_visits_week49.csv, ward_falls.csv, clinic_network.csv and ward_reports.csv",
);
