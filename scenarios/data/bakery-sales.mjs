// Writes bakery-sales.csv beside this script: invented daily sales of six bakeries of one
// (invented) chain, for the bundled scenario bakery-sales.yaml. Seeded, so that running it again
// writes the same bytes: node scenarios/data/bakery-sales.mjs
//
// Columns: branch (the client), day (mon..sun, a category), temperature_c, price_eur, holiday
// (0 or 1), loaves_sold (the target). Each branch has its own base demand and number of days
// (quantity skew); about one day in fifty has no temperature reading (an empty cell), which the
// scenario drops and counts.

import { writeFileSync } from 'node:fs';

const SEED = 20240611;
const DAYS = ['mon', 'tue', 'wed', 'thu', 'fri', 'sat', 'sun'];
const BRANCHES = [
  { name: 'harbour', days: 84, base: 210 },
  { name: 'old-town', days: 70, base: 260 },
  { name: 'station', days: 56, base: 320 },
  { name: 'university', days: 42, base: 150 },
  { name: 'market', days: 35, base: 190 },
  { name: 'hillside', days: 21, base: 120 },
];

// mulberry32: a small seeded generator, enough for invented demo data.
let state = SEED >>> 0;
function uniform() {
  state = (state + 0x6d2b79f5) >>> 0;
  let t = state;
  t = Math.imul(t ^ (t >>> 15), t | 1);
  t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
  return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
}
function normal() {
  return Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
}

const lines = ['branch,day,temperature_c,price_eur,holiday,loaves_sold'];
for (const branch of BRANCHES) {
  const price = 2.5 + uniform();
  for (let d = 0; d < branch.days; d++) {
    const day = DAYS[d % 7];
    const weekend = day === 'sat' || day === 'sun' ? 1 : 0;
    const holiday = uniform() < 0.05 ? 1 : 0;
    const temperature = 12 + 8 * Math.sin((2 * Math.PI * d) / 90) + 3 * normal();
    const dayPrice = price + 0.2 * normal();
    const sold =
      branch.base +
      40 * weekend +
      25 * holiday -
      2.5 * (temperature - 12) -
      30 * (dayPrice - 3) +
      12 * normal();
    const temperatureCell = uniform() < 0.02 ? '' : temperature.toFixed(1);
    lines.push(
      [
        branch.name,
        day,
        temperatureCell,
        dayPrice.toFixed(2),
        holiday,
        Math.max(0, Math.round(sold)),
      ].join(','),
    );
  }
}
writeFileSync(new URL('./bakery-sales.csv', import.meta.url), `${lines.join('\n')}\n`);
