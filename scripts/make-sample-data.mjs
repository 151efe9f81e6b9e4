#!/usr/bin/env node
// make-sample-data.mjs: writes the demo corpus in sample-data/ that siftpack's demo pipeline and
// end-to-end tests run on.
//
// The corpus is the paperwork of an invented tram depot network: service tickets (gzipped JSON
// lines), shift notes (CSV) and maintenance manuals (plain text), plus a small "protected" file
// standing in for an evaluation set. Every sentence comes from the templates and word lists in this
// file, filled in by a seeded PRNG, so two runs produce byte-identical files. Problems are planted
// on purpose (duplicates, near duplicates, junk, text that needs normalizing, records that cannot
// be read, one leaked protected passage) and sample-data/README.md, also written here, lists each
// one with its ids.
//
// Usage: node scripts/make-sample-data.mjs [outDir]     (default: <repo>/sample-data)
//
// Only node: builtins are used, so the script runs before `npm install` and on any Node >= 20.

import { gzipSync } from "node:zlib";
import { createHash } from "node:crypto";
import fs from "node:fs";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { mulberry32 } from "./seeded-random.mjs";

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "..");
const OUT = path.resolve(process.argv[2] ?? path.join(ROOT, "sample-data"));
const MASTER_SEED = 20250117;

// ---------------------------------------------------------------------------------------------
// Seeded randomness (mulberry32: scripts/seeded-random.mjs)
// ---------------------------------------------------------------------------------------------

// FNV-1a, used only to turn a stream name into a seed.
function fnv1a(s) {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) h = Math.imul(h ^ s.charCodeAt(i), 0x01000193) >>> 0;
  return h;
}

// One named stream per part of the corpus: editing the notes templates then leaves the tickets
// unchanged, which keeps diffs of the regenerated data small and reviewable.
class Rand {
  constructor(name) {
    this.next = mulberry32(fnv1a(`${MASTER_SEED}:${name}`));
  }
  int(lo, hi) {
    return lo + Math.floor(this.next() * (hi - lo + 1));
  }
  chance(p) {
    return this.next() < p;
  }
  pick(arr) {
    return arr[Math.floor(this.next() * arr.length)];
  }
  weighted(items, weightOf) {
    const total = items.reduce((s, x) => s + weightOf(x), 0);
    let u = this.next() * total;
    for (const x of items) if ((u -= weightOf(x)) < 0) return x;
    return items[items.length - 1];
  }
  shuffle(arr) {
    const a = arr.slice();
    for (let i = a.length - 1; i > 0; i--) {
      const j = Math.floor(this.next() * (i + 1));
      [a[i], a[j]] = [a[j], a[i]];
    }
    return a;
  }
  sample(arr, k) {
    return this.shuffle(arr).slice(0, k);
  }
}

// ---------------------------------------------------------------------------------------------
// The invented world
// ---------------------------------------------------------------------------------------------

const CLASSES = {
  41: { first: 4101, count: 36, doors: 4, sections: 3 },
  47: { first: 4701, count: 24, doors: 6, sections: 5 },
  52: { first: 5201, count: 40, doors: 4, sections: 3 },
  60: { first: 6001, count: 20, doors: 6, sections: 5 },
};

// Eight depots of uneven size: the split stage groups by `depot`, and uneven groups make the
// held-out fractions land near, not exactly on, the requested ones, as real data would.
const DEPOTS = [
  { name: "Harrow Lane", lines: ["L1", "L4", "L9"], classes: [41, 52], weight: 22 },
  { name: "Quayside", lines: ["L2", "L7"], classes: [47, 52], weight: 18 },
  { name: "Northfold", lines: ["L3", "L5", "L11"], classes: [41, 60], weight: 16 },
  { name: "Millbrook Yard", lines: ["L6", "L8"], classes: [47], weight: 13 },
  { name: "Saltings", lines: ["L10"], classes: [60], weight: 10 },
  { name: "Copperhill", lines: ["L12", "L3"], classes: [52], weight: 9 },
  { name: "Westmere", lines: ["L14"], classes: [41], weight: 7 },
  { name: "Fennick Road", lines: ["L15", "L8"], classes: [60, 47], weight: 5 },
];
for (const d of DEPOTS) d.cars = [];
for (const [cls, c] of Object.entries(CLASSES)) {
  const owners = DEPOTS.filter((d) => d.classes.includes(Number(cls)));
  for (let i = 0; i < c.count; i++) owners[i % owners.length].cars.push(c.first + i);
}
const depotByName = Object.fromEntries(DEPOTS.map((d) => [d.name, d]));
const classOf = (car) => Math.floor(car / 100);

const STOPS = [
  "Tallow Street", "Market Cross", "Riverside Halt", "Bellfounders", "Ashgrove", "Canal Basin",
  "Old Mint", "Station Square", "Larkrise", "Pitman's Row", "Gorse Hill", "Weir Bridge",
  "Orchard Park", "The Arches", "Ferry Steps", "Limekiln", "Upton Green", "Cable Works",
  "Hollins Cross", "Saltmarsh Road", "Kiln Yard", "Drovers Way", "Tanners Parade", "Quillan Street",
  "Brassmoor", "Ledgerwood", "Copper Beech", "Netherby Loop",
];
const MONTHS = [
  "January", "February", "March", "April", "May", "June",
  "July", "August", "September", "October", "November", "December",
];
const WEEKDAYS = ["Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"];
const ROLES = [
  "shift supervisor", "night fitter", "day fitter", "depot controller", "electrical technician",
  "yard marshal", "cleaning team lead", "apprentice fitter", "stores clerk",
];
const pad2 = (n) => String(n).padStart(2, "0");
const cap = (s) => s.charAt(0).toUpperCase() + s.slice(1);
const lcFirst = (s) => s.charAt(0).toLowerCase() + s.slice(1);

// Slots that take a fresh value at every use. Each has its own range, because "a gap of 17 mm"
// or "a carbon strip of 2 mm" would read as wrong to anyone who maintains vehicles.
const SLOT = {
  time: (r) => `${pad2(r.int(5, 23))}:${pad2(r.int(0, 59))}`,
  time2: (r) => `${pad2(r.int(5, 23))}:${pad2(r.int(0, 59))}`,
  date: (r) => `${r.int(1, 28)} ${r.pick(MONTHS)}`,
  n: (r) => String(r.int(2, 12)),
  cycles: (r) => String(r.pick([10, 12, 15, 20, 25, 30, 50])),
  gap: (r) => (r.int(5, 40) / 10).toFixed(1),
  strip: (r) => String(r.int(8, 21)),
  flat: (r) => String(r.int(36, 58)), // long enough to need the lathe, which is the fix given
  amps: (r) => String(r.int(9, 22)),
  road: (r) => String(r.int(1, 12)),
  road2: (r) => String(r.int(1, 12)),
  grams: (r) => String(r.int(250, 520)),
  kg: (r) => String(r.int(20, 160)),
  mins: (r) => String(r.pick([20, 30, 40, 45, 60, 90, 120, 150])),
  cm: (r) => String(r.int(2, 25)),
  degrees: (r) => String(r.int(2, 9)),
  period: (r) => r.pick(["weekly", "28-day", "56-day", "quarterly", "annual"]),
  weather: (r) =>
    r.pick([
      "heavy rain", "dry and cold", "freezing fog", "hot, around 30 degrees", "windy with leaves on the line",
      "light snow", "drizzle", "bright and dry",
    ]),
  role: (r) => r.pick(ROLES),
  weekday: (r) => r.pick(WEEKDAYS),
  shift: (r) => r.pick(["early", "late", "night"]),
};

function fill(tpl, ctx, r) {
  return tpl.replace(/\{(\w+)\}/g, (_, k) => {
    if (k in ctx) return ctx[k];
    if (k in SLOT) return SLOT[k](r);
    throw new Error(`template slot {${k}} has no value: ${tpl}`);
  });
}

// ---------------------------------------------------------------------------------------------
// Ticket sentence pools. Each subsystem has fault scenarios; a scenario's symptoms, checks and
// causes belong together, and each cause is [finding, fix, part used or null, test or null], so a
// ticket never reports one fault and fixes another. Symptoms are clauses that fit after "reported
// that"; the other entries are sentences without the final full stop.
// ---------------------------------------------------------------------------------------------

const SUBSYSTEMS = [
  {
    key: "doors", prefix: "DR", codes: [204, 211, 214, 227, 238], manual: "MN-01", weight: 24,
    scenarios: [
      {
        symptoms: [
          "{door} would not close fully and the tram could not take power",
          "{door} closed very slowly and the warning chime sounded for the whole cycle",
          "{door} bounced back open at {stop} and needed three attempts to lock",
          "{door} made a loud grinding noise on opening",
          "{door} was hanging open about {opening} mm at the top corner",
        ],
        checks: [
          "Checked the lower guide rail of {door} for debris and wear",
          "Measured the motor current during a close cycle at {amps} A, which is high for this class",
          "Cycled the door from the cab {cycles} times and watched the linkage",
          "Inspected the door seal and the drive nut for play",
        ],
        causes: [
          ["The guide rail was packed with grit and a flattened drinks can", "Cleaned and greased the guide rail and refitted the cover", null, null],
          ["The bottom roller had a flat on it and the bearing was rough", "Fitted a new bottom roller from stores", "a door roller", null],
          ["The drive nut had worn enough to let the leaf rock on the spindle", "Changed the drive nut and greased the spindle", "a door drive nut", null],
          ["The leaf was striking the seal early at the top corner", "Adjusted the end stop by {gap} mm so the leaf meets the seal evenly", null, null],
          ["A section of the door seal had come loose and was folding into the gap", "Refitted the seal with fresh adhesive and trimmed the loose end", "a length of door seal", null],
        ],
        tests: ["Door cycled {cycles} times without a fault", "Ran a full door test from both cabs, and all doors closed and locked first time"],
      },
      {
        symptoms: [
          "{door} kept reopening on the close command even with nothing in the way",
          "the sensitive edge on {door} kept triggering without anything touching it",
        ],
        checks: [
          "Read the door controller log, which showed {n} obstruction events in the last hour of service",
          "Tested the sensitive edge with the test block at both heights",
        ],
        causes: [
          ["The sensitive edge rubber was split along about {cm} cm and letting water in", "Replaced the sensitive edge", "a sensitive edge", "Obstruction test passed at both heights"],
          ["The sensitive edge plug behind the door pillar was corroded", "Cleaned the plug pins and fitted a new seal to the connector", null, null],
        ],
        tests: ["Obstruction test passed at both heights", "Door cycled {cycles} times without a fault"],
      },
      {
        symptoms: [
          "the door interlock dropped out twice between {stop} and {stop2}, cutting traction each time",
          "the cab showed a door fault with code {code} although every door looked closed",
        ],
        checks: [
          "Checked continuity through the interlock loop from the cab to {door}",
          "Read the door controller log, which showed {n} interlock events since the last exam",
        ],
        causes: [
          ["The interlock microswitch on {door} was loose on its bracket and only made contact when the leaf was pushed hard", "Replaced the interlock microswitch and set the gap to {igap} mm", "an interlock microswitch", null],
          ["A connector on the door controller was half out, probably disturbed at the last exam", "Reseated the connector and secured it with a cable tie", null, null],
        ],
        tests: ["Ran a full door test from both cabs, and all doors closed and locked first time", "Drove the car round the depot loop {n} times with no interlock drop-outs"],
      },
      {
        symptoms: ["the passenger push button on {door} did nothing", "the push button light on {door} stayed on all the time"],
        checks: ["Tested the push button with the multimeter at the door control box", "Checked the push button wiring behind the door pillar panel"],
        causes: [
          ["The push button switch had failed open", "Fitted a new push button unit", "a push button unit", null],
          ["A crimp on the push button wiring had pulled out", "Re-crimped the wire and checked the others in the loom", null, null],
        ],
        tests: ["Push button tested {cycles} times, and the door opened every time"],
      },
    ],
  },
  {
    key: "traction", prefix: "TR", codes: [302, 315, 318, 341, 350], manual: "MN-06", weight: 16,
    scenarios: [
      {
        symptoms: [
          "the tram lost power on the climb towards {stop} and crawled the rest of the way",
          "the traction inverter tripped on overcurrent when pulling away from {stop}",
          "only one bogie was giving traction, so the tram pulled away very sluggishly",
          "the driver's display showed {code} and traction stayed inhibited until a reset",
        ],
        checks: [
          "Downloaded the inverter event log and found {n} trips since {date}",
          "Checked the speed sensor gap on axle {axle}",
          "Ran an insulation test on the traction motor of bogie {bogie}",
          "Checked the line contactor tips for pitting",
        ],
        causes: [
          ["The speed sensor on axle {axle} was reading intermittently, which confuses the slip control", "Replaced the speed sensor and set the gap to {sgap} mm", "a speed sensor", null],
          ["The line contactor tips were badly pitted", "Changed the line contactor tips", "a set of contactor tips", null],
          ["Insulation resistance on the motor was low, at {lowohm} megohms, most likely moisture after the wash", "Ran the motor heaters for two hours and re-tested at {goodohm} megohms", null, null],
          ["The sensor cable was chafed where it passes the bogie frame", "Repaired the cable and re-clipped it clear of the frame", null, null],
        ],
        tests: ["Test run round the depot loop with no trips", "Took the car out on {line} as far as {stop} and back, and traction was normal"],
      },
      {
        symptoms: [
          "there was a burning smell from the roof equipment after a long run on {line}",
          "the inverter overtemperature warning came on during the afternoon peak",
          "the driver's display showed {code} and power was cut back until the car had cooled",
        ],
        checks: [
          "Checked the inverter cooling fan and intake for blockage",
          "Inspected the brake resistor grid on the roof for damage and discolouration",
          "Downloaded the inverter event log, which showed the heatsink temperature climbing all afternoon",
        ],
        causes: [
          ["The inverter cooling intake was clogged with leaves and dust", "Blew out the cooling intake and changed the filter", "an inverter intake filter", null],
          ["One element of the brake resistor grid was cracked", "Isolated the damaged resistor element and booked the car for a roof exam", null, null],
          ["The inverter cooling fan was not running at all", "Replaced the fan fuse, and the fan started and ran normally", null, null],
        ],
        tests: ["Ran the car for an hour on the test loop and the heatsink temperature stayed steady", "Test run round the depot loop with no warnings"],
      },
      {
        symptoms: ["acceleration was jerky below about 10 km/h", "the tram surged forward when power was notched up leaving {stop}"],
        checks: ["Downloaded the inverter event log and looked at the speed signals around each pull-away", "Checked the speed sensor gap on axle {axle}"],
        causes: [
          ["The two speed sensors on bogie {bogie} disagreed by a few km/h at low speed", "Reset the gap on both sensors to {sgap} mm", null, null],
          ["The master controller was giving a noisy demand signal near the first notch", "Cleaned the master controller track and checked its output with the laptop", null, null],
        ],
        tests: ["Pulled away from a stand ten times on the test loop, smooth every time"],
      },
    ],
  },
  {
    key: "brakes", prefix: "BR", codes: [110, 122, 137, 149], manual: "MN-04", weight: 16,
    scenarios: [
      {
        symptoms: ["the parking brake would not release after stabling", "the park brake applied on its own at {stop}"],
        checks: ["Checked the park brake release pressure at the test point", "Read the brake control unit log for the time of the event"],
        causes: [
          ["A release valve on the park brake was sticking", "Freed and lubricated the release valve, and a replacement is on order", "a park brake release valve", null],
          ["The release pressure was low, at {bar} bar", "Topped up the hydraulic reservoir and bled the circuit, and the pressure came up to 100 bar", null, null],
        ],
        tests: ["Applied and released the park brake {cycles} times from the cab without a fault"],
      },
      {
        symptoms: ["the track brake indicator stayed lit after the brake was released", "a track brake magnet was heard dragging on the rail near {stop}"],
        checks: ["Checked the track brake magnet height above the rail", "Checked the track brake relay in the cab cupboard"],
        causes: [
          ["The track brake magnet was sitting {gap} mm too low and touching the rail head at points", "Reset the magnet height to {mag} mm", null, null],
          ["The track brake relay was sticking in", "Replaced the relay", "a track brake relay", null],
        ],
        tests: ["Brake test done on the depot road, all readings within limits"],
      },
      {
        symptoms: ["the sander did not deliver any sand when tested at {stop}", "the sand-low warning came on although the hoppers had been filled that morning"],
        checks: ["Tested the sand flow from each nozzle into a bag for 30 seconds", "Opened the hopper caps and looked at the sand"],
        causes: [
          ["The sand hopper was damp and the sand had caked around the outlet", "Emptied and dried the hopper and refilled it with fresh dry sand", null, null],
          ["Two sand nozzles were blocked with caked sand", "Cleaned the nozzles and adjusted the sand flow", "two sand nozzles", null],
        ],
        tests: ["Sand flow now {grams} grams in 30 seconds per nozzle"],
      },
      {
        symptoms: ["wheel slide protection kept cutting in on dry rail near {stop}", "the driver saw the wheel slide lamp flicker at every stop along {line}"],
        checks: ["Checked the wheel slide sensors on every axle", "Read the brake control unit log for the time of the event"],
        causes: [
          ["A wheel slide sensor on axle {axle} had a loose plug", "Refitted the plug and secured the cable", null, null],
          ["The wheel slide sensor on axle {axle} was caked in brake dust", "Cleaned the sensor face and reset its gap", null, null],
        ],
        tests: ["Brake test done on the depot road, all readings within limits"],
      },
      {
        symptoms: ["there was a squeal from bogie {bogie} every time the brake was applied", "the tram stopped short at {stop} and the driver said the brakes felt fierce"],
        checks: ["Checked the brake pad thickness on bogie {bogie}", "Inspected the discs on bogie {bogie} for heat spots and scoring"],
        causes: [
          ["The pads on bogie {bogie} were down to the wear mark", "Replaced the pads on bogie {bogie} and bedded them in", "a set of brake pads", null],
          ["One pad had picked up grease from the flange lubricator", "Replaced the contaminated pads, cleaned the disc and re-aimed the lubricator nozzle", "a set of brake pads", null],
        ],
        tests: ["Brake test done on the depot road, all readings within limits", "Bedding-in stops done on the test track and the squeal has gone"],
      },
    ],
  },
  {
    key: "pantograph", prefix: "PT", codes: [401, 406, 412, 430], manual: "MN-02", weight: 12,
    scenarios: [
      {
        symptoms: ["the pantograph would not raise on the first attempt in the morning", "the pantograph dropped on its own between {stop} and {stop2}"],
        checks: ["Timed the raise at {n} seconds", "Checked the air supply to the raising cylinder for leaks", "Checked the contact force with the spring balance"],
        causes: [
          ["The raising cylinder hose was chafed and leaking", "Replaced the hose and clipped it away from the frame", "a raising cylinder hose", null],
          ["Contact force was low, about {lownewtons} newtons", "Adjusted the raising spring to bring the contact force back into range", null, null],
        ],
        tests: ["Raised and lowered the pantograph {cycles} times under the depot wire without a fault"],
      },
      {
        symptoms: ["there was heavy arcing at the pan head along {line}", "the driver heard a bang from the roof near {stop}"],
        checks: ["Measured the carbon strips at {strip} mm", "Inspected the horns of the pan head for arc damage"],
        causes: [
          ["The carbon strip was chipped on the leading edge", "Replaced both carbon strips", "two carbon strips", null],
          ["A horn on the pan head was burnt through", "Replaced the horn and dressed the arc marks on the other one", "a pan head horn", null],
        ],
        tests: ["Raised and lowered the pantograph {cycles} times under the depot wire without a fault"],
      },
      {
        symptoms: ["the main breaker tripped every time the pantograph was raised", "the main breaker would not reset after the pantograph went up"],
        checks: ["Inspected the roof insulators for tracking marks", "Read the main breaker trip counter"],
        causes: [
          ["One roof insulator had a tracking mark and was filthy", "Cleaned the insulators and applied fresh silicone grease", null, null],
          ["A pigeon nest on the roof was touching the main breaker housing", "Removed the nest, cleaned the roof and fitted a bird guard", null, null],
        ],
        tests: ["Main breaker closed first time on {cycles} raises"],
      },
    ],
  },
  {
    key: "hvac", prefix: "HV", codes: [501, 507, 522], manual: "MN-05", weight: 12,
    scenarios: [
      {
        symptoms: ["the saloon was far too warm even though the air conditioning was running", "passengers complained that the saloon was stuffy on a hot afternoon"],
        checks: ["Measured the supply air at {warm} degrees with the unit on full cooling", "Checked the refrigerant pressures on the service ports", "Checked the condenser fan"],
        causes: [
          ["The condenser coil was clogged with grime from the street", "Washed the condenser coil", null, null],
          ["The condenser fan had seized", "Replaced the condenser fan motor", "a condenser fan motor", null],
        ],
        tests: ["Supply air down to {cool} degrees after fifteen minutes"],
      },
      {
        symptoms: ["the saloon heaters stayed on all day on a mild day", "the saloon was uncomfortably hot with the heating on full"],
        checks: ["Checked the thermostat reading against a hand thermometer", "Read the heating controller log"],
        causes: [["The saloon temperature sensor was reading {degrees} degrees low", "Replaced the temperature sensor", "a saloon temperature sensor", null]],
        tests: ["Heaters checked switching off at the set temperature"],
      },
      {
        symptoms: ["the cab heater was blowing cold air", "the heaters under the seats in section {section} were stone cold"],
        checks: ["Checked the heater fuses in the cab cupboard", "Measured the element resistance at the heater box"],
        causes: [
          ["A heater element fuse had blown", "Replaced the fuse and checked the element resistance", null, null],
          ["A heater contactor was not pulling in", "Replaced the heater contactor", "a heater contactor", null],
        ],
        tests: ["Heaters checked warm at every seat bay"],
      },
      {
        symptoms: ["water was dripping from the ceiling vent in section {section}", "passengers reported a puddle under the ceiling vent in section {section}"],
        checks: ["Checked the condensate drain for blockage", "Checked the drain tray under the roof unit for cracks"],
        causes: [["The condensate drain was blocked with a mat of fluff", "Cleared the drain and flushed it through", null, null]],
        tests: ["Poured a litre of water into the tray and it drained in under a minute"],
      },
      {
        symptoms: ["there was a rattling noise from the roof unit above section {section}", "the roof unit above section {section} was vibrating badly at full cooling"],
        checks: ["Checked the fan mounting bolts on the roof unit", "Checked the fan blades for damage"],
        causes: [["A fan mounting bolt had backed out", "Refitted the bolt with thread locker and checked the others", "a fan mounting kit", null]],
        tests: ["Ran the unit for twenty minutes with no rattle"],
      },
    ],
  },
  {
    key: "passenger-info", prefix: "PI", codes: [601, 612, 618], manual: "MN-01", weight: 10,
    scenarios: [
      {
        symptoms: ["the destination display on the rear cab showed the wrong route", "the front destination display showed a route that was withdrawn last year"],
        checks: ["Checked the route data version on the display controller"],
        causes: [["The route data was two versions old", "Loaded the current route data", null, null]],
        tests: ["Both destination displays checked against the duty card"],
      },
      {
        symptoms: ["next-stop announcements were running one stop behind on {line}", "the next-stop display froze at {stop} and stayed there"],
        checks: ["Checked the GPS aerial connection on the roof", "Checked the route data version on the display controller"],
        causes: [
          ["The aerial lead had worked loose", "Tightened the aerial lead and sealed the joint", null, null],
          ["The route data was two versions old", "Loaded the current route data", null, null],
        ],
        tests: ["Announcements checked over a full round trip on {line}"],
      },
      {
        symptoms: ["the PA was crackling and nearly inaudible in the rear section", "the saloon speakers in section {section} were silent"],
        checks: ["Checked the amplifier output and the speaker wiring"],
        causes: [
          ["The speaker cable was trapped behind a ceiling panel and had chafed through", "Repaired the speaker cable and re-routed it", null, null],
          ["One saloon speaker had a torn cone", "Fitted a new saloon speaker", "a saloon speaker", null],
        ],
        tests: ["PA tested from both cabs with clear sound in every section"],
      },
      {
        symptoms: ["the emergency call unit by {door} did not connect to the cab", "the emergency call unit by {door} connected but the cab could not hear the caller"],
        checks: ["Tested every emergency call unit from the cab"],
        causes: [
          ["The call unit had a loose ribbon cable", "Reseated the ribbon cable", null, null],
          ["The call unit microphone had failed", "Replaced the call unit", "an emergency call unit", null],
        ],
        tests: ["Every call unit tested from both cabs"],
      },
      {
        symptoms: ["the CCTV recorder showed a disk error on start-up", "the CCTV recorder stopped recording part way through the day"],
        checks: ["Ran the recorder self-test"],
        causes: [["The recorder disk had bad sectors", "Swapped the recorder disk and sent the old one for data recovery", "a recorder disk", null]],
        tests: ["Recorder self-test passed and all cameras recording"],
      },
      {
        symptoms: ["the cab CCTV monitor showed no picture from the saloon cameras", "two saloon cameras showed a blue screen on the cab monitor"],
        checks: ["Checked the camera network switch", "Checked the camera power supply fuse"],
        causes: [
          ["The network switch had locked up", "Power-cycled the switch and reloaded its settings from the laptop", null, null],
          ["The camera power supply fuse had blown", "Replaced the fuse and checked the camera cable for a short", null, null],
        ],
        tests: ["All cameras showing on the cab monitor after a restart"],
      },
    ],
  },
  {
    key: "wheels", prefix: "WH", codes: [702, 715, 720], manual: "MN-03", weight: 10,
    scenarios: [
      {
        symptoms: ["there was a loud thumping from under section {section} that got faster with speed"],
        checks: ["Measured a wheel flat on axle {axle} at {flat} mm long", "Checked the wheels on every axle for flats"],
        causes: [["There was a flat on axle {axle} from a slide during leaf fall", "Booked the car onto the wheel lathe at Harrow Lane", null, null]],
        tests: [],
      },
      {
        symptoms: ["the flange lubricator warning was showing", "the tram squealed badly on the curve at {stop}"],
        checks: ["Checked the flange lubricator reservoir and nozzle"],
        causes: [
          ["The lubricator nozzle was blocked", "Cleared the nozzle and refilled the reservoir", "a lubricator nozzle", null],
          ["The lubricator reservoir was empty", "Refilled the reservoir and primed the pump", null, null],
        ],
        tests: ["Lubricator warning cleared and the nozzle spraying onto the flange"],
      },
      {
        symptoms: ["the ride was very rough over the points at {stop}", "the car was rolling badly at speed on {line}"],
        checks: ["Checked the primary suspension springs on bogie {bogie}", "Checked the dampers on every bogie for oil leaks"],
        causes: [
          ["A damper on bogie {bogie} was leaking oil", "Replaced the damper", "a primary damper", null],
          ["A primary spring on bogie {bogie} had a broken coil", "Replaced the spring pair on that axle", "a pair of primary springs", null],
        ],
        tests: ["Ride checked on a test run with no abnormal noise"],
      },
    ],
  },
];

// Ranges for the slots that only tickets use, each kept to values a maintainer would believe.
Object.assign(SLOT, {
  igap: (r) => (r.int(4, 8) / 10).toFixed(1),
  opening: (r) => String(r.int(5, 25)),
  sgap: (r) => (r.int(8, 12) / 10).toFixed(1),
  lowohm: (r) => String(r.pick([0.2, 0.4, 0.6, 0.8])),
  goodohm: (r) => String(r.pick([20, 50, 120, 200])),
  bar: (r) => String(r.int(60, 85)),
  mag: (r) => String(r.int(7, 10)),
  lownewtons: (r) => String(r.int(35, 52)),
  warm: (r) => String(r.int(21, 29)),
  cool: (r) => String(r.int(12, 16)),
});

const OPENERS = [
  "Driver of car {car} on {line} reported that {symptom}",
  "Car {car} was taken out of service on {line} at {time} because {symptom}",
  "Fault {code} logged by car {car} at {time}, and the driver said {symptom}",
  "On {date} the driver of car {car} reported that {symptom}",
  "Second report this week for car {car}: {symptom}",
  "Reported by the {role} at {time} on car {car}: {symptom}",
  "Control passed on a report from {line} that {symptom} on car {car}",
  "Car {car} ({cls}) was brought back to {depot} after the driver reported that {symptom}",
];
// Optional sentences: background goes right after the opener, notes about the work after the
// repair. Those that mention {part} are only used when the cause involved a part.
const EXTRAS_BACKGROUND = [
  "The car had been through its {period} exam only {n} days before",
  "Weather at the time was {weather}",
  "The same fault was logged on this car on {date} and signed off as no fault found",
  "Passengers were detrained at {stop} and the car ran empty to the depot",
  "The driver had already tried a full reset from the cab, without success",
  "The car was shunted to road {road} for the work",
];
const EXTRAS_WORK = [
  "Needed a second pair of hands, so the {role} helped",
  "Worked to the procedure in {manual}",
  "Job took about {mins} minutes",
  "Photos are attached to the job card",
];
const EXTRAS_RESOLVED = ["Fault {code} was cleared from the log once the work was finished"];
const EXTRAS_PART = ["Parts used: {part}", "Stores had only one {partname} left, so a reorder has been raised"];
const CLOSINGS = [
  "Car returned to service",
  "Released for the {time} run-out",
  "Booked for a re-check at the next {period} exam",
  "No further action needed",
  "Will monitor over the next week and re-open if it comes back",
  "Signed off by the shift supervisor",
  "Handed over to the day shift to finish",
  "Car available for traffic from {time}",
];
const NO_FAULT = [
  "Could not reproduce the fault on the depot road",
  "No fault found after a full functional test",
  "Everything checked within limits and no fault codes were stored",
];
const NO_FAULT_CLOSINGS = [
  "Car returned to service",
  "Will monitor over the next week and re-open if it comes back",
  "Booked for a re-check at the next {period} exam",
  "Asked control to tell the driver to report it again with the exact time if it recurs",
];

function ticketContext(r, depot, line, sub) {
  const car = r.pick(depot.cars);
  const c = CLASSES[classOf(car)];
  const [stop, stop2] = r.sample(STOPS, 2);
  const k = r.int(1, c.doors);
  const side = r.pick(["left", "right"]);
  const door = r.pick([`door ${k} on the ${side} side`, `door ${k}${side === "left" ? "L" : "R"}`, `the number ${k} door on the ${side}`]);
  return {
    car: String(car),
    cls: `Class ${classOf(car)}`,
    line,
    depot: depot.name,
    stop,
    stop2,
    door,
    code: `${sub.prefix}-${r.pick(sub.codes)}`,
    axle: String(r.int(1, 4)),
    bogie: r.pick(["A", "B", "C"].slice(0, c.sections === 3 ? 2 : 3)),
    section: String(r.int(1, c.sections)),
    manual: sub.manual,
  };
}

const sentence = (s) => `${cap(s)}.`;

// Four shapes of ticket (prose, labelled fields, terse, unresolved), because real ticket queues mix
// careful write-ups with one-liners, and a corpus of one shape would make de-duplication too easy.
function ticketBody(r, depot, line) {
  const sub = r.weighted(SUBSYSTEMS, (s) => s.weight);
  const sc = r.pick(sub.scenarios);
  const ctx = ticketContext(r, depot, line, sub);
  const [finding, fix, part, causeTest] = r.pick(sc.causes);
  if (part) Object.assign(ctx, { part, partname: part.replace(/^(a|an|two|a pair of|a set of|a length of) /, "") });
  const f = (tpl) => fill(tpl, ctx, r);
  const symptomTpl = r.pick(sc.symptoms);
  const symptom = f(symptomTpl);
  const test = () => f(causeTest && (sc.tests.length === 0 || r.chance(0.5)) ? causeTest : sc.tests.length ? r.pick(sc.tests) : causeTest ?? r.pick(CLOSINGS));
  const style = r.weighted(["prose", "fields", "terse", "unresolved"], (s) => ({ prose: 50, fields: 22, terse: 16, unresolved: 12 })[s]);

  if (style === "fields") {
    const labels = r.pick([
      ["Fault", "Checks", "Found", "Action", "Status"],
      ["Reported", "Investigation", "Cause", "Repair", "Outcome"],
    ]);
    const checks = r.sample(sc.checks, r.int(1, 2)).map(f);
    const lines = [`${labels[0]}: ${cap(`car ${ctx.car} on ${ctx.line}, ${symptom}`)}.`];
    lines.push(`${labels[1]}: ${checks.map((c, i) => (i ? lcFirst(c) : c)).join("; ")}.`);
    if (r.chance(0.75)) lines.push(`${labels[2]}: ${f(finding)}.`);
    lines.push(`${labels[3]}: ${f(fix)}.`);
    if (r.chance(0.7)) lines.push(`${labels[4]}: ${r.chance(0.5) ? test() : f(r.pick(CLOSINGS))}.`);
    return { body: lines.join("\n") };
  }
  if (style === "terse") {
    const parts = [`${ctx.code} on car ${ctx.car}, ${ctx.line}.`, sentence(symptom)];
    if (r.chance(0.5)) parts.push(sentence(f(finding)));
    parts.push(sentence(f(fix)), sentence(r.chance(0.5) ? test() : f(r.pick(CLOSINGS))));
    return { body: parts.join(" ") };
  }

  // A symptom that already names the fault code reads oddly after "Fault {code} logged".
  const openers = symptomTpl.includes("{code}") ? OPENERS.filter((o) => !o.includes("{code}")) : OPENERS;
  const s = [sentence(fill(r.pick(openers), { ...ctx, symptom }, r))];
  for (const c of r.sample(sc.checks, r.int(style === "unresolved" ? 1 : 0, 2))) s.push(sentence(f(c)));
  let workPool = EXTRAS_WORK;
  if (style === "unresolved") {
    s.push(sentence(f(r.pick(NO_FAULT))));
  } else {
    if (r.chance(0.7)) s.push(sentence(f(finding)));
    s.push(sentence(f(fix)));
    if (r.chance(0.5)) s.push(sentence(test()));
    workPool = [...EXTRAS_WORK, ...EXTRAS_RESOLVED, ...(part ? EXTRAS_PART : [])];
  }
  if (r.chance(0.35)) s.splice(1, 0, sentence(f(r.pick(EXTRAS_BACKGROUND))));
  for (const e of r.sample(workPool, r.int(0, 2))) s.push(sentence(f(e)));
  if (r.chance(0.75) || s.length < 2) s.push(sentence(f(r.pick(style === "unresolved" ? NO_FAULT_CLOSINGS : CLOSINGS))));
  return { body: s.slice(0, 8).join(" ") };
}

// ---------------------------------------------------------------------------------------------
// Text measures used both to keep ordinary records apart and to verify the planted problems.
// normalizeText mirrors the default clean-up the pipeline is specified to do (NFKC, \r\n and \r to
// \n, strip control and zero-width characters, strip trailing spaces, at most one blank line, trim).
// ---------------------------------------------------------------------------------------------

function normalizeText(s) {
  return s
    .normalize("NFKC")
    .replace(/\r\n?|[\u2028\u2029]/g, "\n")
    .replace(/[\u200b-\u200d\u2060\ufeff]/g, "")
    .replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f]/g, "")
    .replace(/[ \t]+$/gm, "")
    .replace(/\n{3,}/g, "\n\n")
    .trim();
}
const wordsOf = (s) => normalizeText(s).toLowerCase().split(/\s+/).filter(Boolean);

// Word 5-gram shingles: short enough that a one-word change only disturbs five shingles, long enough
// that shared boilerplate phrases ("Car returned to service") do not make unrelated tickets look alike.
function shingles(s, k = 5) {
  const w = wordsOf(s);
  const out = new Set();
  if (w.length === 0) return out;
  if (w.length < k) out.add(w.join(" "));
  for (let i = 0; i + k <= w.length; i++) out.add(w.slice(i, i + k).join(" "));
  return out;
}
// Character 5-grams over the normalized, lower-cased text with whitespace runs collapsed; only the
// self-check uses them, to show the data also separates cleanly for character-level de-duplication.
function charShingles(s, k = 5) {
  const t = normalizeText(s).toLowerCase().replace(/\s+/g, " ");
  const out = new Set();
  for (let i = 0; i + k <= Math.max(t.length, k); i++) out.add(t.slice(i, i + k));
  return out;
}
const CHAR_LIMIT = 0.65;
function jaccard(a, b) {
  if (a.size === 0 && b.size === 0) return 1;
  let inter = 0;
  const [small, big] = a.size <= b.size ? [a, b] : [b, a];
  for (const x of small) if (big.has(x)) inter++;
  return inter / (a.size + b.size - inter);
}

// Ordinary records are drawn until they are neither a copy nor a look-alike of any earlier one, so
// that every duplicate the pipeline finds is one listed in the README. Two measures, because the
// pipeline's near-duplicate stage may shingle more finely than 5 words: word 3-grams catch records
// that share a phrase with only the numbers changed, which 5-grams under-count. The limits sit far
// below the planted near duplicates (0.78 and up on 5-grams) so that any sensible threshold
// separates the two.
const LIMIT = { w5: 0.3, w3: 0.35 };
const profile = (text) => ({ w5: shingles(text, 5), w3: shingles(text, 3) });
const similarity = (p, q) => ({ w5: jaccard(p.w5, q.w5), w3: jaccard(p.w3, q.w3) });
const tooSimilar = (sim) => sim.w5 >= LIMIT.w5 || sim.w3 >= LIMIT.w3;
class DistinctPool {
  constructor() {
    this.seen = new Set();
    this.profiles = [];
  }
  tryAdd(text) {
    const norm = normalizeText(text);
    if (this.seen.has(norm)) return false;
    const p = profile(text);
    for (const o of this.profiles) if (tooSimilar(similarity(p, o))) return false;
    this.seen.add(norm);
    this.profiles.push(p);
    return true;
  }
  // `make` may return null to reject a draw outright (e.g. a note without the features wanted).
  draw(make, what) {
    for (let attempt = 0; attempt < 500; attempt++) {
      const x = make();
      if (x && this.tryAdd(typeof x === "string" ? x : x.body)) return x;
    }
    throw new Error(`could not draw a distinct ${what}; widen the templates`);
  }
}
const pool = new DistinctPool();

// ---------------------------------------------------------------------------------------------
// Planted near duplicates: templated tickets of 80+ words. Variants change only the car number
// and/or the day of the month, i.e. one or two words, as when a fitter copies last week's sheet.
// ---------------------------------------------------------------------------------------------

const NEAR_DUP_TEMPLATES = [
  {
    name: "28-day pantograph exam",
    text:
      "Planned 28-day pantograph exam carried out on car {car} on {day} {month}. Both carbon strips measured at 17 mm " +
      "against a condemning limit of 9 mm, with even wear across the head and no chips on the leading edges. Raising " +
      "time was 7 seconds and lowering time 5 seconds, both inside the limits on the exam sheet. Contact force checked " +
      "with the spring balance at 70 newtons. Roof insulators wiped down and inspected, with no tracking marks found. " +
      "Air hoses to the raising cylinder checked for chafing and found secure. Exam sheet completed and filed, and the " +
      "car returned to service with no defects carried forward.",
  },
  {
    name: "wheel profile measurement",
    text:
      "Routine wheel profile measurement on car {car} on {day} {month} using the handheld profile gauge. All wheels " +
      "measured for flange height, flange thickness and tread hollowness. Flange thickness ranged from 24 mm to 26 mm, " +
      "above the lower limit of 22 mm. Flange height was within limits on every wheel and no flat longer than 35 mm " +
      "was found on any axle. Back-to-back dimensions checked on all axles and written on the sheet. Results uploaded " +
      "to the wheel database, and the next measurement is due in 40 days. No action required, car released to traffic.",
  },
  {
    name: "weekly sanding check",
    text:
      "Weekly sanding check on car {car} on {day} {month}. All four hoppers topped up with dry sand from the tower, " +
      "about 12 kg in total. Sand flow tested from each nozzle into a collection bag for 30 seconds and weighed, all " +
      "between 380 and 420 grams, which is inside the target band. Nozzle heights checked at 40 mm above the rail head " +
      "and the sand pipe heaters tested warm to the touch. Two nozzle brushes were worn and have been replaced. " +
      "Sanding system signed off as serviceable and the hopper caps checked for a good seal.",
  },
  {
    name: "door seal modification M-117",
    text:
      "Modification M-117, replacement of the upper door seals with the revised profile, completed on car {car} on " +
      "{day} {month}. Old seals removed from all doors on both sides, channels cleaned of old adhesive and debris, and " +
      "new seals fitted with the approved adhesive. Each door then cycled ten times and the closing force checked at " +
      "the leading edge with the force gauge, with all readings under the limit. Water test carried out with the depot " +
      "wash hose for two minutes per door and no leaks found. Modification sheet updated and a copy sent to engineering.",
  },
  {
    name: "CCTV download request",
    text:
      "Request from the control room to download CCTV footage from car {car} for an incident on {day} {month} between " +
      "17:10 and 17:40. Footage copied from the onboard recorder to the encrypted download drive using the depot " +
      "laptop, and checksums written on the form. Recorder checked afterwards and returned to normal recording with no " +
      "disk errors reported by the self-test. Drive sealed in an evidence bag, signed for and handed to the duty " +
      "controller. Form filed with the shift paperwork and a note made in the car logbook.",
  },
];

// ---------------------------------------------------------------------------------------------
// Shift notes
// ---------------------------------------------------------------------------------------------

const NOTE_SENTENCES = [
  "Quiet {shift} shift, only one call-out, to {stop} at {time}, where car {car} had a door stuck open",
  'Driver of car {car} said the tram "felt like it was dragging" on the climb past {stop}, but nothing showed on the log',
  "Contractor on site from {time} for the {work}, signed in at the gatehouse, escorted by the {role}",
  'Oil on the floor by the road {road} pit steps again, sand put down and a cone placed, but the "wet floor" sign is missing',
  "Frost forecast, so the point heaters on the depot fan went on at {time} and were checked at {time2}",
  "Car {car} is on road {road} with the pantograph tied down, do not raise it until {ticket} is closed",
  "Wheel lathe out of use until {weekday} morning, contractor booked",
  "Yard lights on the east fan are out again, reported to facilities for the third time",
  "Wash plant running at reduced pressure because the brushes are worn",
  "Stores are down to {n} {stock}, reorder raised",
  "Control were told at {time} that car {car} is not available for the morning run-out",
  "Shunting radio channel 2 has heavy interference near the sand tower, so use channel 4",
  'The {role} asked me to note that the new "blue" grease is NOT for door guide rails',
  "Chased {ticket} with engineering, they want the removed part kept, so it is bagged and labelled on the shelf by the stores hatch",
  "Car {car} came in with graffiti on the {side} side, cleaning team told, photos taken",
  "Fire alarm test at {time}, all staff mustered at point B, took {n} minutes",
  "Pit lights on road {road} flickering, electrician booked for {weekday}",
  "Sand tower hopper filled, about {kg} kg used this shift",
  "Handbrake wheel on the shunting tractor is stiff, greased it, still stiff",
  "Car {car} and car {car2} swapped between roads {road} and {road2} so the lathe road is clear",
  "Two apprentices shadowing today, both signed the induction sheet",
  "Door on the stores cage does not latch, padlock used instead",
  'Message from control: "any car with an open door ticket stays in until a fitter has checked it"',
  "Compressor in the shed ran non-stop from {time}, found a drain valve leaking and closed it off",
  "Found a tool bag left on the roof walkway of road {road}, handed to the supervisor",
  "Heating in the mess room is off again, portable heater borrowed from stores",
  "Car {car} still waiting for {part}, see {ticket}",
  "{n} trams stabled on road {road}, all swept and sand topped up",
  "Spoke to the {role} about the {time} run-out, car {car} swapped in for car {car2}",
  "Depot gate barrier stuck open from {time}, gatehouse staff stood in until it was reset",
  "Leaf mulch building up on the depot fan again, the railhead cleaning car is booked for {weekday}",
  "Vending machine in the mess room took my money, again",
  "Slow run-out this morning because car {car} would not raise its pantograph, sorted by {time}",
  'Please stop leaving the pit lamps switched on, the charger board says "overload" every morning',
  "Test weights for the spring balance were found in the lost property box, now back in the calibration cupboard",
  "Overhead crane on road {road} inspected by the contractor, certificate is in the file in the office",
];
const NOTE_WORK = [
  "pit drainage survey", "fire door repairs", "overhead crane inspection", "wash plant service",
  "roof walkway handrail repair", "sand tower alarm test", "compressor service", "lighting survey",
];
const NOTE_STOCK = ["door rollers", "carbon strips", "brake pad sets", "cable ties", "cleaning cloths", "filters", "dust masks"];
const NOTE_PARTS = ["a door roller", "a speed sensor", "two carbon strips", "a brake pad set", "a roof insulator", "a recorder disk"];
const HANDOVER_HEADERS = [
  "Handover, {shift} shift:",
  "Notes for the incoming shift at {depot}:",
  "To the {shift} shift, in no particular order:",
  "{depot} handover",
];

function noteBody(r, depot, ticketIdsByDepot) {
  const ids = ticketIdsByDepot?.get(depot.name) ?? [];
  // A fresh context per sentence: the items of one handover are about different cars.
  const freshCtx = () => {
    const [car, car2] = r.sample(depot.cars, 2);
    return {
      car: String(car),
      car2: String(car2),
      depot: depot.name,
      stop: r.pick(STOPS),
      side: r.pick(["left", "right"]),
      work: r.pick(NOTE_WORK),
      stock: r.pick(NOTE_STOCK),
      part: r.pick(NOTE_PARTS),
      ticket: ids.length ? r.pick(ids) : "the open ticket",
    };
  };
  const ctx = freshCtx();
  const pickSentences = (k) => r.sample(NOTE_SENTENCES, k).map((t) => sentence(fill(t, freshCtx(), r)));
  const style = r.weighted(["plain", "handover", "paragraphs"], (s) => ({ plain: 55, handover: 30, paragraphs: 15 })[s]);
  if (style === "handover") {
    const items = pickSentences(r.int(2, 5)).map((x) => `- ${x.replace(/\.$/, "")}`);
    return [fill(r.pick(HANDOVER_HEADERS), ctx, r), ...items].join("\n");
  }
  if (style === "paragraphs") return `${pickSentences(2).join(" ")}\n\n${pickSentences(r.int(1, 2)).join(" ")}`;
  return pickSentences(r.int(1, 3)).join(" ");
}

// ---------------------------------------------------------------------------------------------
// Manuals. The wording is fixed per manual; only the shared boilerplate is chosen by the PRNG.
// ---------------------------------------------------------------------------------------------

const GENERAL_SAFETY = [
  "All work under this procedure is done by staff who hold the competence listed on the depot training matrix for the task. If you are not sure whether you are competent, ask the shift supervisor before you start.",
  "Before starting, read the ticket or work order in full, check the car's logbook for open defects, and make sure the controller knows which car you are working on and where it is stabled.",
  "Stop work and ask the shift supervisor if anything you find does not match this procedure, or if a reading is outside its limits and the procedure does not say what to do.",
];
const RECORDS = [
  "Record all readings on the exam sheet for the car, sign and date it, and hand it to the shift supervisor. The supervisor enters the results into the maintenance system before the end of the shift.",
  "Write the readings and the names of the staff who did the work on the job card. Any item found outside limits and not put right must be raised as a new defect ticket before the car is released.",
  "Keep the completed sheet with the car's file at the depot for at least two years. Electronic copies are made by the maintenance system when the job is closed.",
];

const MANUALS = [
  {
    code: "MN-01", slug: "door-system-functional-test", title: "Passenger door functional test and adjustment",
    applies: "Class 41, Class 52", owner: "Harrow Lane", revision: ["D", "2025-03-04", "C"],
    purpose: "This procedure sets out how to test the passenger doors of a tram after a door defect has been repaired, and how to adjust the door leaves, end stops and interlock switches so that every door closes, locks and proves closed to the cab within the limits given in section 6.",
    scope: "It covers the plug-sliding doors fitted to Class 41 and Class 52 cars. It does not cover the cab side doors, which are hinged and have their own procedure, or the emergency egress handles, which are tested at the annual safety exam.",
    hazards: "A door closing under power can trap fingers with considerable force. Keep hands clear of the leading edge and the leaf pivot while the door is being cycled, and only cycle doors from the cab once the person at the door has called clear. Where a door is to be worked on with the leaf open, isolate the door at its local isolating cock and hang a personal lock on the handle.",
    tools: [
      "Door force gauge, calibrated", "Feeler gauges, 0.05 to 1.00 mm", "Test block for the sensitive edge, with 30 mm and 60 mm faces",
      "Torque wrench, 5 to 50 Nm", "Lint-free cloths and approved cleaning solvent", "Guide rail grease, type G2",
      "Laptop with the door controller service software", "Personal lock and isolation tag",
    ],
    procedure: [
      ["Preparation", [
        "Stable the tram on a level road with the pantograph lowered and the battery on, and apply the parking brake.",
        'Tell the depot controller which car is under test, and place a "Doors under test" board in both cabs.',
        "Connect the laptop to the door controller service port behind the cab rear panel and save a copy of the fault log before clearing anything.",
      ]],
      ["Visual inspection", [
        "Open each door in turn and inspect the lower guide rail for grit, litter and wear grooves. Clean the rail with a cloth and solvent, then apply a thin film of G2 grease along the running surface.",
        "Check that the bottom roller turns freely with no flat spots. A roller that drags or knocks must be replaced, not cleaned.",
        "Inspect the door seals for splits, flattening and loose sections. Press along the seal with a thumb; it should spring back within a second.",
        "Check that the drive nut on the spindle has no axial play. Grip the leaf at its leading edge and push it along the direction of travel; any movement you can feel at the nut is too much.",
      ]],
      ["Functional test", [
        "From the cab, open and close all doors on one side together five times. Watch for doors that lag the others by more than about a second.",
        "Repeat the previous step for the other side.",
        "At each door, hold the 30 mm face of the test block against the sensitive edge at knee height and command a close. The door must stop and reopen. Repeat with the 60 mm face at shoulder height.",
        "Measure the closing force at the midpoint of the leading edge with the force gauge and record the peak reading on the test sheet.",
        "With the door closed and locked, try to pull the leaf open by hand using the handle recess. It must not move.",
      ]],
      ["Adjustment", [
        "If a leaf does not meet the seal evenly, slacken the end stop bolts and move the stop in steps of no more than 1 mm, then tighten to 18 Nm and repeat the functional test for that door.",
        "If the interlock does not prove the door closed, check the switch gap with feeler gauges. With the door closed the gap must be between 0.4 and 0.8 mm. Adjust the switch bracket and tighten it to 6 Nm.",
        "After any adjustment, repeat the whole functional test for that door, not only the check that failed.",
      ]],
      ["Completion", [
        "Clear the fault log, cycle all doors ten more times and confirm that no new events have been logged.",
        "Remove the boards from the cabs, disconnect the laptop and tell the controller the car is ready.",
      ]],
    ],
    acceptance: [
      "Every door opens and closes in 3 to 4 seconds.",
      "Peak closing force at the leading edge is no more than 150 N.",
      "The sensitive edge reverses the door on both faces of the test block.",
      "The interlock proves the door closed first time on every cycle of the final test.",
    ],
    extra: ["Common causes of repeat door faults", [
      "Most repeat door faults come back to the guide rail. Grit carried in on shoes in wet weather builds up in the rail faster than the exam interval allows for, and a door that is slow to close in the morning is often fine by midday once the rail has been swept by a few hundred cycles. If the same door is reported twice in a month, clean the rail at every daily check for two weeks and record whether the fault returns.",
      "The second common cause is a connector disturbed during other work. The door controller sits behind a panel that is also removed to reach the heater contactors, and its plugs are easily knocked half out. Always check the plugs by hand after any work behind that panel.",
    ]],
  },
  {
    code: "MN-02", slug: "pantograph-inspection", title: "Pantograph inspection and carbon strip replacement",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Northfold", revision: ["C", "2025-01-20", "B"],
    // The second copy of this manual differs only in this revision line (see DUPLICATE_REVISION).
    purpose: "This procedure describes the planned inspection of the pantograph and the replacement of worn carbon contact strips. It is carried out at every 28-day exam and whenever a driver reports arcing, a pantograph that will not raise, or a bang from the roof.",
    scope: "Every class in the fleet uses the same single-arm pantograph with two carbon strips on a sprung head. The procedure covers the head, the strips, the raising cylinder and its air supply, the roof insulators and the main breaker reset. Repairs to the frame or the articulation bearings are workshop tasks and are not covered here.",
    hazards: "Roof work is only allowed on a shed road where the overhead line has been isolated and earthed under MN-08, and where the roof access platform is in place with its gates closed. Never take a lowered pantograph as proof that the roof is dead: the line may still be live, and roof equipment can hold a charge. Test for dead with the approved voltage detector before touching anything on the roof, and apply the portable earth to the pantograph frame.",
    tools: [
      "Roof access platform key", "Approved voltage detector and proving unit", "Portable earthing lead", "Vernier caliper",
      "Spring balance, 0 to 150 N, with hook adaptor", "Stopwatch", "Torque wrench, 10 to 60 Nm",
      "Replacement carbon strips, one pair", "Silicone insulator grease", "Lint-free cloths",
    ],
    procedure: [
      ["Isolation and access", [
        "Confirm with the depot controller that the road is isolated and earthed and that your name is on the permit.",
        "Lower the pantograph from the cab, switch off the battery and remove the cab key. Keep the key on your person for the whole job.",
        "Climb to the platform, close the gate behind you and test the roof equipment for dead with the voltage detector. Prove the detector on the proving unit before and after the test.",
        "Clip the portable earth to the pantograph frame at the marked earthing point.",
      ]],
      ["Inspection", [
        "Inspect the carbon strips along their whole length for chips, cracks and grooves. A chip deeper than 3 mm on the leading edge is a reason to change the strip even if its thickness is still in limits.",
        "Measure the strip thickness with the vernier at the centre and at 100 mm from each end. Record the lowest reading for each strip.",
        "Check the strip carriers for cracks around the fixing holes and check that the fixing bolts are tight.",
        "Inspect the horns of the head for arc damage. Light marking can be dressed with a fine file; a horn that is burnt through must be replaced.",
        "Inspect the raising cylinder hose for chafing where it passes the lower arm, and listen for air leaks with the system charged.",
        "Wipe the roof insulators clean and look for tracking marks, which show as thin dark lines running along the surface. Any insulator with tracking must be reported on a defect ticket.",
      ]],
      ["Strip replacement", [
        "Remove the four fixing bolts from the worn strip carrier and lift the carrier off the head. Do not let the head spring up; hold it down while the second person removes the carrier.",
        "Clean the mounting faces on the head and fit the new carrier. Tighten the bolts to 24 Nm in a cross pattern.",
        "Always replace both strips together, so that the head sits level and wears evenly.",
      ]],
      ["Contact force and timing", [
        "Remove the portable earth, leave the platform and close the gate before any test with the pantograph raised. The roof must be clear of people and tools.",
        "With the line still isolated, charge the air system and raise the pantograph against the test stop. Measure the static contact force with the spring balance hooked under the centre of the head.",
        "Time the raise from the command to the head reaching the stop, and the lowering from the command to the head resting on its housing. Repeat three times and record the slowest of each.",
        "If the contact force is out of range, adjust the raising spring by one turn of the adjuster at a time and measure again.",
      ]],
      ["Completion", [
        "Lower the pantograph, remove your lock from the permit board and return the cab key to the controller.",
        "Record the readings on the exam sheet and raise a defect ticket for anything found that was not put right.",
      ]],
    ],
    acceptance: [
      "Carbon strip thickness no less than 9 mm at any point, and no chip deeper than 3 mm.",
      "Static contact force between 60 and 80 N.",
      "Raising time no more than 8 seconds and lowering time no more than 6 seconds.",
      "No air leak audible at the raising cylinder or its hose.",
      "Roof insulators clean and free of tracking.",
    ],
  },
  {
    code: "MN-03", slug: "wheel-profile-measurement", title: "Wheel profile measurement and wheel lathe preparation",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Harrow Lane", revision: ["B", "2024-10-15", "A"],
    purpose: "This procedure covers measuring wheel profiles with the handheld profile gauge, recording the results, and preparing a car for the wheel lathe when the measurements show that reprofiling is due.",
    scope: "It applies to every axle on every class in the fleet. The lathe work itself is done by the lathe operator under a separate work instruction held at Harrow Lane, which has the only underfloor lathe in the network. Cars from other depots are moved to Harrow Lane on a transfer run at night.",
    hazards: "Wheel measurement is done from the pit. Before entering the pit, check that the car is secured with the parking brake applied and wheel chocks in place on both sides, that the pantograph is down and tied, and that a \"Men working\" board is on the cab desk at each end. Keep the pit walkways clear of tools and cables. The profile gauge has a laser emitter: do not look into its window and do not point it at other staff.",
    tools: [
      "Handheld wheel profile gauge with a charged battery", "Back-to-back gauge", "Diameter tape", "Wheel chocks, four",
      "Men working boards, two", "Pit lamp", "Tablet with the wheel database app",
    ],
    procedure: [
      ["Preparation", [
        "Stable the car over the pit on a straight section of road. The gauge gives false flange readings on curved track.",
        "Secure the car as described in section 3 and switch on the pit lighting.",
        "Switch the profile gauge on and let it warm up for five minutes, then check it on the reference block. If the reading on the block is off by more than 0.1 mm, do not use the gauge; report it to the supervisor.",
      ]],
      ["Measurement", [
        "Clean the tread and flange of the first wheel where the gauge will sit. Grease and brake dust give false readings.",
        "Place the gauge on the wheel with its foot against the back face of the rim and take a reading. The gauge records flange height, flange thickness, flange slope and tread hollowness.",
        "Take two more readings at roughly a third of a turn apart by moving the car a short distance under supervision. Use the average of the three.",
        "Measure the wheel diameter with the diameter tape at the tread datum line.",
        "Check the back-to-back dimension on each axle at three points around the wheel. The three readings should agree within 0.5 mm.",
        "Look along the tread for flats, spalling and cracks. Measure the length of any flat in the direction of the rail.",
        "Repeat the measurement steps for every wheel on the car, working from the number 1 end.",
      ]],
      ["Assessment", [
        "Upload the readings to the wheel database. The app marks any value outside the limits in red.",
        "A car is due for the lathe when any flange thickness is below 22 mm, when any flat is longer than 35 mm, or when the diameters of the two wheels on one axle differ by more than 0.5 mm.",
        "A flat longer than 60 mm, or any crack in a rim, means the car must not move under its own power. Tell the controller at once and arrange a tow.",
      ]],
      ["Lathe preparation", [
        "Book a lathe slot at Harrow Lane through the controller and attach the measurement printout to the transfer sheet.",
        "Remove any build-up of sand or grease from the wheels before the transfer, as it damages the lathe tooling.",
        "Switch the flange lubricator off at its isolating switch, so that no grease is sprayed onto the lathe.",
        "After the lathe, measure every wheel again as described above and upload the new profile, so that the next due date is calculated from the turned wheel and not the worn one.",
      ]],
    ],
    acceptance: [
      "Flange thickness at least 22 mm on every wheel.",
      "No flat longer than 35 mm and no crack anywhere on the tread or rim.",
      "Wheel diameters on one axle within 0.5 mm of each other.",
      "Back-to-back dimension within the limits printed on the gauge.",
    ],
  },
  {
    code: "MN-04", slug: "brake-pad-replacement", title: "Friction brake pad inspection and replacement",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Quayside", revision: ["E", "2025-05-12", "D"],
    purpose: "This procedure describes how to check and replace the pads of the hydraulic friction brake calipers fitted to each bogie, and how to bed in new pads before the car returns to traffic.",
    scope: "It applies to all classes. The calipers are released by hydraulic pressure and applied by springs, so they clamp the disc whenever pressure is lost. Caliper overhaul and repairs to the hydraulic unit are workshop tasks and are outside this procedure.",
    hazards: "A spring-applied caliper stores a large force. Never put your fingers between the pads and the disc, and never remove a caliper from its mounting without first winding it off with the manual release. Brake dust must not be blown off with compressed air; use the vacuum cleaner with the fine filter and wear a dust mask. Chock the wheels before the park brake is released for the work.",
    tools: [
      "Manual release tool for the caliper", "Pad retraction tool", "Vernier caliper", "Torque wrench, 20 to 120 Nm",
      "Vacuum cleaner with fine filter", "Dust masks", "Wheel chocks", "Brake pad sets as required",
      "Hydraulic test gauge with quick-release coupling",
    ],
    procedure: [
      ["Preparation", [
        "Stable the car over the pit and chock the wheels of the bogie being worked on.",
        "From the cab, release the park brake so that the hydraulic unit holds the calipers off the disc, then isolate the hydraulic unit for that bogie at its isolating valve. The calipers will now apply.",
        "Fit the manual release tool to the caliper and wind it until the pads are clear of the disc. Count the turns, so that you can wind it back by the same amount later.",
      ]],
      ["Inspection", [
        "Vacuum the dust from the caliper and the disc.",
        "Measure the thickness of each pad at both ends with the vernier. Pads must be replaced when any reading is 5 mm or less, or when the two ends differ by more than 2 mm.",
        "Inspect the disc for cracks, heat spots and scoring. Fine surface crazing is acceptable; a crack that reaches the edge of the disc is not, and the car must be stopped.",
        "Check the pad retaining pins and their clips for wear.",
      ]],
      ["Replacement", [
        "Remove the clips and pull out the retaining pins. Slide the old pads out of the caliper.",
        "Push the piston back with the retraction tool. Work slowly and watch the level in the hydraulic reservoir, which rises as the piston goes back.",
        "Fit the new pads with the friction face towards the disc, and refit the pins with new clips.",
        "Always change all the pads on one axle at the same time.",
        "Wind the manual release tool back by the number of turns counted earlier and remove it.",
        "Open the isolating valve again and apply and release the brake ten times from the cab to set the pads.",
      ]],
      ["Checks", [
        "Connect the test gauge to the test point and check the release pressure. It should be between 95 and 105 bar with the brake released.",
        "Check that each pad moves clear of the disc when released. There should be a visible gap on both sides.",
      ]],
      ["Bedding in", [
        "New pads must be bedded in before the car carries passengers. Take the car out on the depot test track and make fifteen moderate stops from about 25 km/h, leaving at least a minute between stops so the pads do not overheat.",
        "After bedding in, look at the pads again for even contact marks across the friction face.",
      ]],
    ],
    acceptance: [
      "No pad thinner than 5 mm, and no pad worn more than 2 mm unevenly end to end.",
      "Release pressure between 95 and 105 bar.",
      "Visible running clearance on both sides of every disc with the brake released.",
      "New pads bedded in with an even contact pattern.",
    ],
  },
  {
    code: "MN-05", slug: "saloon-hvac-seasonal-service", title: "Saloon heating and air-conditioning seasonal service",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Quayside", revision: ["C", "2024-04-02", "B"],
    purpose: "This procedure is used twice a year: in spring, to prepare the saloon air-conditioning for the summer, and in autumn, to prepare the saloon and cab heaters for the winter. Each service also includes the general checks that apply in both seasons.",
    scope: "It covers the roof-mounted saloon units on Class 52 and Class 60 cars and the under-seat heaters fitted to every class. Class 41 and Class 47 cars have no saloon air-conditioning, so only the general checks and the autumn service apply to them.",
    hazards: "Only staff certified for refrigerant handling may connect gauges to the refrigerant circuit or add refrigerant. Roof units are reached from the roof access platform with the overhead line isolated and earthed under MN-08. Heater elements stay hot for some minutes after they are switched off; isolate the heater supply at its breaker in the cab equipment cupboard and wait ten minutes before putting a hand behind a guard.",
    tools: [
      "Manifold gauge set, for certified staff only", "Digital thermometer with probe", "Fin comb",
      "Low-pressure hose and condenser cleaner", "Drain rods", "Replacement return-air filters", "Torque wrench, 5 to 50 Nm",
      "Freezer spray",
    ],
    procedure: [
      ["General checks, both seasons", [
        "Check the saloon return-air filters. Replace them if they are clogged, or every six months, whichever comes first.",
        "Clear the condensate drains with the drain rods and pour a litre of water into each tray to prove the drain runs freely. Water that stands in the tray for more than a minute means the drain is still partly blocked.",
        "Check all fan mounting bolts and tighten them to 12 Nm. Look for bolts that have backed out; they leave a bright ring on the paint around the head.",
        "Check the saloon temperature sensor against the digital thermometer placed next to it for ten minutes. The two must agree within 1 degree.",
      ]],
      ["Spring service: cooling", [
        "Wash the condenser coil from the inside outwards with the low-pressure hose and the condenser cleaner. Never use a pressure washer; it flattens the fins.",
        "Straighten any bent fins with the fin comb.",
        "Run the unit on full cooling for fifteen minutes with the doors closed and measure the supply air at the ceiling outlet nearest the unit. It should be between 12 and 16 degrees.",
        "If the supply air is too warm and the coil is clean, the refrigerant charge must be checked by certified staff with the manifold gauges. Record the pressures on the service sheet.",
      ]],
      ["Autumn service: heating", [
        "Switch the saloon heaters on at full output and check with the back of the hand that every heater under the seats is warming. A cold heater usually means a blown element fuse in the heater box.",
        "Check that the heater guards are secure and that no litter has collected behind them. Litter against a heater element is a fire risk.",
        "Check the cab heater and the windscreen demister in both cabs. The demister should clear a fogged screen in under two minutes.",
        "Test the frost protection setting by cooling the control sensor with freezer spray. The heaters should switch on within a minute.",
      ]],
    ],
    acceptance: [
      "Supply air between 12 and 16 degrees after fifteen minutes of full cooling (Class 52 and Class 60).",
      "Every saloon heater warm at full output, and all guards secure and clear of litter.",
      "Temperature sensor within 1 degree of the reference thermometer.",
      "All condensate trays draining within a minute.",
    ],
  },
  {
    code: "MN-06", slug: "traction-inverter-fault-finding", title: "Traction inverter fault-finding guide",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Millbrook Yard", revision: ["A", "2023-11-27", "none"],
    // This file is written as if exported from a PDF: \r\n line endings, ligatures, trailing spaces,
    // form feeds between pages and runs of blank lines (see pdfArtefacts).
    purpose: "This guide helps fitters and technicians find the cause of traction inverter faults reported by drivers or logged by the train management system. It is a guide to fault-finding, not a repair procedure: repairs inside the inverter cabinet are carried out by the inverter workshop.",
    scope: "Each motor bogie has its own inverter, so a car has two or three depending on its class. The fault codes in section 8 are the same on every class. Faults in the auxiliary converter, which feeds the lighting and the heating, are covered by a separate guide.",
    hazards: "The capacitors in the inverter hold a lethal charge for several minutes after the line supply is removed. Never open the inverter cabinet. All checks in this guide are made from the service laptop, from the roof, or from the outside of the cabinet. Where a check needs the roof, follow MN-08 first and do not start until the line is isolated and earthed.",
    tools: [
      "Service laptop with the train management software", "Insulation tester, 1000 V", "Multimeter",
      "Speed sensor setting gauge", "Torque wrench, 5 to 50 Nm", "Spare inverter intake filter",
    ],
    procedure: [
      ["First steps for every fault", [
        "Download the event log from the train management system before doing anything else. Resetting the inverter or switching the battery off can clear the most useful records.",
        "Note the fault code, the time, the speed and the line voltage at the moment of the fault. The log keeps the thirty seconds before each event.",
        "Find out where the fault happened and what the tram was doing: pulling away, coasting, braking or climbing. The ticket or the driver will usually say.",
        "If the same code has been logged on this car in the last month, read the earlier tickets first. A fault that keeps coming back after a reset usually has a single cause that the earlier work did not find.",
      ]],
      ["Speed sensor check", [
        "With the car stationary and the battery off, remove the sensor cover on the axle named in the log.",
        "Check the gap between the sensor face and the toothed wheel with the setting gauge. The gap must be between 0.8 and 1.2 mm.",
        "Inspect the sensor cable along its route to the bogie frame for chafing, flattened sections or loose clips. A damaged cable gives the same fault as a failed sensor.",
        "If the gap is wrong, slacken the two fixing bolts, set the gap with the gauge and tighten to 9 Nm. Check the gap again after tightening, as the sensor can move as the bolts are tightened.",
      ]],
      ["Insulation test on a traction motor", [
        "Only carry out this test with the car isolated, the battery off and the motor cables disconnected at the motor terminal box, so that the inverter is not exposed to the test voltage.",
        "Test between each motor phase and the motor frame at 1000 V for one minute. Record the readings.",
        "A reading below 1 megohm means the motor must not be energised. If the car has just been washed or has stood outside in heavy rain, run the motor heaters for two hours and test again before condemning the motor.",
      ]],
      ["Returning the car to service", [
        "Clear the fault log only after all the readings have been recorded on the ticket.",
        "Take the car round the depot test loop at least twice, pulling away hard from a stand each time, and then check that no new events have been logged.",
      ]],
    ],
    acceptance: [
      "No new inverter events after two laps of the test loop.",
      "Speed sensor gaps between 0.8 and 1.2 mm.",
      "Motor insulation at least 1 megohm phase to frame.",
    ],
    extra: ["Fault codes", [
      "TR-302, overcurrent on pull-away. Most often wheel slip on a greasy or leaf-covered rail, a speed sensor giving a false reading, or a damaged motor cable. Check the rail conditions in the log first, then the speed sensors, then the cables.",
      "TR-315, overvoltage in the inverter while braking. The brake resistor on the roof has not taken the braking energy. Check the resistor grid for open or cracked elements and check its connections.",
      "TR-318, inverter overtemperature. The cooling air is not getting through. Check the intake filter, which fills with leaves in autumn, and check that the cooling fan runs when the inverter is switched on.",
      "TR-341, speed sensor disagreement. The two sensors on one bogie read different speeds. Check both gaps and both cables as described in section 5.",
      "TR-350, earth fault. Insulation somewhere in the traction circuit has broken down. Do not reset this fault more than once. Test the motors as described in section 5, and if they are sound, the car goes to the inverter workshop.",
    ]],
  },
  {
    code: "MN-07", slug: "sanding-system-service", title: "Sanding system refilling, calibration and nozzle setting",
    applies: "Class 41, Class 47, Class 52, Class 60", owner: "Saltings", revision: ["B", "2024-08-19", "A"],
    purpose: "The sanding system drops dry sand onto the rail ahead of the leading wheels to improve grip when braking or pulling away on a poor rail. This procedure covers refilling the hoppers, calibrating the sand flow, setting the nozzles and checking the heaters that keep the sand dry.",
    scope: "It applies to every class. Each car has four hoppers, two at each end, and each hopper feeds one nozzle in front of a leading wheel. Sand is supplied from the sand tower at each depot; filling by hand from bags is only allowed when the tower is out of use.",
    hazards: "Sand dust irritates the eyes and lungs. Wear eye protection and a dust mask when filling hoppers and when testing the flow. Do not stand in front of a nozzle while the sander is operated from the cab. The sand tower filling arm is heavy; lower it with the handle, never by pulling on the hose.",
    tools: [
      "Sand collection bags", "Scales, 0 to 2 kg", "Stopwatch", "Nozzle height gauge", "Eye protection and dust masks",
      "Replacement nozzle brushes", "Spanners, 13 mm and 17 mm",
    ],
    procedure: [
      ["Refilling", [
        "Stop the car under the sand tower so that the filler caps line up with the filling arms.",
        "Check that the sand in the tower is dry. A handful squeezed in the fist should run freely through the fingers when the hand is opened. Damp sand must not be loaded.",
        "Open each filler cap and look into the hopper for lumps, water or rubbish. A hopper with caked sand must be emptied and dried before it is refilled.",
        "Fill each hopper to the level mark and no higher. An overfilled hopper packs the sand down and restricts the flow.",
        "Refit the caps and check that each seal is whole and seats evenly.",
      ]],
      ["Flow calibration", [
        "Fit a collection bag over each nozzle.",
        "Operate the sander from the cab for 30 seconds, timed with the stopwatch.",
        "Weigh the sand in each bag. The target is between 380 and 420 grams per nozzle.",
        "If a nozzle is outside the band, turn the metering screw on its hopper by a quarter of a turn, clockwise to reduce the flow and anticlockwise to increase it, and test again.",
      ]],
      ["Nozzle position and heaters", [
        "Measure the height of each nozzle above the rail head with the height gauge. It must be 40 mm, plus or minus 5 mm.",
        "Check that each nozzle points at the contact point between the wheel and the rail. A nozzle that points at the wheel face wastes sand and fills the bogie with grit.",
        "Replace any nozzle brush that is worn down to less than half its length.",
        "With the heaters switched on, check by touch that each sand pipe heater is warm along its length. A cold pipe lets moisture condense in winter and the sand will cake.",
      ]],
    ],
    acceptance: [
      "Every nozzle delivers between 380 and 420 grams in 30 seconds.",
      "Nozzle height 40 mm, plus or minus 5 mm, above the rail head.",
      "All hoppers filled to the level mark with dry sand and all caps sealed.",
      "All sand pipe heaters warm.",
    ],
  },
  {
    code: "MN-08", slug: "depot-overhead-line-isolation", title: "Isolation and earthing of the overhead line on shed roads",
    applies: "All depots; all shed roads fitted with section isolators", owner: "Copperhill", revision: ["F", "2025-02-03", "E"],
    purpose: "This procedure defines how the overhead line above a shed road is switched off, proved dead and earthed so that staff can work on tram roofs, and how the supply is restored afterwards. Nobody may go onto a tram roof in a shed unless this procedure has been followed.",
    scope: "It applies to every shed road at every depot that has a section isolator. It does not cover the overhead line in the street or on the depot fan outside the shed, which belongs to network control and is isolated under their own arrangements.",
    hazards: "The overhead line carries enough energy to kill at once and to start fires. The most dangerous moment is the restoring of supply: a person still on a roof, or an earth left in place, turns a routine job into a serious incident. For that reason every person working on a roof keeps a personal lock on the permit board, and the supply cannot be restored until every lock has been removed by the person who fitted it.",
    tools: [
      "Isolator operating pole", "Approved voltage detector and proving unit", "Earthing pole with earth lead",
      "Permit board and personal locks", '"Isolated - do not switch" boards',
    ],
    procedure: [
      ["Requesting an isolation", [
        "The person in charge of the roof work asks the depot controller for an isolation of the named road, giving the car number and the work to be done.",
        "The controller checks that no tram is about to move onto that road and that no other work on the road needs the supply, then issues a permit with a number from the permit book.",
      ]],
      ["Switching off", [
        "The authorised person opens the section isolator with the operating pole and checks by eye that the blades are fully open.",
        "The authorised person locks the isolator handle with the controller's lock and hangs an \"Isolated - do not switch\" board on it.",
      ]],
      ["Proving dead and earthing", [
        "Prove the voltage detector on the proving unit.",
        "Test the contact wire with the detector at the point of work. The detector must show no voltage.",
        "Prove the detector on the proving unit again. If it fails at this point, the test in the previous step does not count and must be repeated with another detector.",
        "Connect the earth lead to the rail first, then hook the earthing pole onto the contact wire. Never attach the wire end first.",
        "The earth stays in place until all work on the road has finished.",
      ]],
      ["Working under the permit", [
        "Each person who will go onto a roof fits their personal lock to the permit board before climbing, and writes their name and the time on the permit.",
        "The gates of the roof access platform are kept closed whenever anyone is on the roof.",
      ]],
      ["Restoring supply", [
        "Each person removes their own lock when they have left the roof for the last time. Nobody may remove another person's lock for any reason; if a lock is left on the board, the controller must find its owner.",
        "When the board is clear, the authorised person checks the roofs and the platform for tools and people, removes the earthing pole from the wire, then disconnects the earth lead from the rail.",
        "The authorised person removes the lock and board from the isolator and closes the isolator with the operating pole.",
        "The controller cancels the permit and records the time the supply was restored.",
      ]],
    ],
    acceptance: [
      "Before supply is restored: every personal lock removed by its owner, every tool accounted for, the platform gates closed, and the earthing equipment removed and stowed.",
    ],
  },
];
const DUPLICATE_REVISION = { code: "MN-02", older: ["B", "2024-06-11", "A"] };

function wrap(text, width, firstPrefix, restPrefix) {
  const words = text.split(" ");
  const lines = [];
  let cur = firstPrefix;
  let curHasWord = false;
  for (const w of words) {
    if (curHasWord && cur.length + 1 + w.length > width) {
      lines.push(cur);
      cur = restPrefix + w;
    } else {
      cur += (curHasWord ? " " : "") + w;
    }
    curHasWord = true;
  }
  lines.push(cur);
  return lines;
}

function renderManual(m, r, revision) {
  const out = [];
  const para = (t) => out.push(...wrap(t, 78, "", ""), "");
  out.push(`FLEET ENGINEERING MANUAL ${m.code}`, m.title, `Applies to: ${m.applies}`);
  out.push(`Revision: ${revision[0]}    Issued: ${revision[1]}    Supersedes: ${revision[2]}`);
  out.push(`Document owner: Fleet Engineering, ${m.owner} depot`, "");
  let sec = 0;
  const heading = (h) => out.push(`${++sec}. ${h}`, "");
  heading("Purpose");
  para(m.purpose);
  heading("Scope");
  para(m.scope);
  heading("Safety");
  para(m.hazards);
  for (const p of r.sample(GENERAL_SAFETY, 2)) para(p);
  heading("Tools and materials");
  for (const t of m.tools) out.push(`  - ${t}`);
  out.push("");
  heading("Procedure");
  let step = 0;
  m.procedure.forEach(([sub, steps], i) => {
    out.push(`${sec}.${i + 1} ${sub}`, "");
    for (const s of steps) {
      const label = `${++step}.`.padEnd(4);
      out.push(...wrap(s, 78, `  ${label}`, "      "), "");
    }
  });
  heading("Acceptance criteria");
  for (const a of m.acceptance) out.push(...wrap(a, 78, "  - ", "    "));
  out.push("");
  if (m.extra) {
    heading(m.extra[0]);
    for (const p of m.extra[1]) para(p);
  }
  heading("Records");
  para(r.pick(RECORDS));
  out.push(`End of ${m.code}.`);
  return out.join("\n") + "\n";
}

// What a PDF-to-text export typically leaves behind, applied to MN-06 only.
function pdfArtefacts(text, r) {
  const lines = text.replace(/fi/g, "\ufb01").replace(/fl/g, "\ufb02").split("\n");
  const out = [];
  const pageEvery = Math.ceil(lines.length / 3);
  lines.forEach((line, i) => {
    out.push(line.length && r.chance(0.3) ? line + " ".repeat(r.int(1, 4)) : line);
    if (i > 0 && i % pageEvery === 0 && i < lines.length - 5) {
      out.push("", "", "", `MN-06 Traction inverter fault-\ufb01nding guide    page ${i / pageEvery} of 3`, "\f");
    }
  });
  return out.join("\r\n");
}

// ---------------------------------------------------------------------------------------------
// Protected passages (stand-in evaluation set). Passage 2's first sentence is pasted into one ticket.
// ---------------------------------------------------------------------------------------------

const EVAL_PASSAGES = [
  "The first electric cars on the Saltings route drew their current from a single overhead wire and returned it through the running rails, which meant that a broken bond between two lengths of rail could leave a stretch of track at a dangerous voltage. The engineers of the time walked the line every Sunday morning with a lamp and a hand meter, testing each bond in turn and painting a small white mark beside every one they had passed.",
  "When a wheel locks under braking and slides along the rail, the small patch of steel in contact heats and cools so quickly that it hardens into a flat spot on the tread. Every turn of the wheel afterwards brings that flat down onto the rail with a blow that passengers hear as a steady thump, and that slowly loosens the fastenings in the track below.",
  "A timetable is a promise made under uncertainty. Planners know that dwell times at busy stops stretch in wet weather, that one late car soon gathers a queue of others behind it, and that recovery time placed at the end of a route only helps if drivers are actually allowed to take it before setting off again.",
  "Question: a depot has six shed roads, and each road holds two trams end to end. On a winter night eleven trams are stabled and one road is closed for pit repairs. How many trams must be stabled outside on the fan? Answer: one, because the five open roads hold ten trams between them.",
];
const LEAKED_SENTENCE = EVAL_PASSAGES[1].split(". ")[0] + ".";

// ---------------------------------------------------------------------------------------------
// Building the ticket files
// ---------------------------------------------------------------------------------------------

const rT = new Rand("tickets");
const PRIORITIES = ["P1", "P2", "P3", "P4"];
const pickPriority = (r) => r.weighted(PRIORITIES, (p) => ({ P1: 1, P2: 4, P3: 9, P4: 4 })[p]);

function regularTicket(r, year) {
  const depot = r.weighted(DEPOTS, (d) => d.weight);
  const t = pool.draw(() => {
    const line = r.pick(depot.lines);
    return { line, ...ticketBody(r, depot, line) };
  }, "ticket");
  return { year, depot: depot.name, line: t.line, priority: pickPriority(r), body: t.body, kind: "regular" };
}

const files = { 2025: [], 2026: [] };
for (const year of [2025, 2026]) {
  const n = year === 2025 ? 175 : 170;
  for (let i = 0; i < n; i++) {
    files[year].push(regularTicket(rT, year));
  }
}

// Planted records are inserted at random places (never before the record they copy), so the
// problems are spread through the files instead of sitting together at the end.
const rP = new Rand("planted");
function insert(year, rec, after) {
  const arr = files[year];
  const lo = after && after.year === year ? arr.indexOf(after) + 1 : 0;
  arr.splice(rP.int(lo, arr.length), 0, rec);
  return rec;
}
const used = new Set();
function pickRegular(year, pred = () => true) {
  const candidates = files[year].filter((t) => t.kind === "regular" && !used.has(t) && pred(t));
  const t = rP.pick(candidates);
  used.add(t);
  return t;
}
const wc = (s) => s.split(/\s+/).filter(Boolean).length;
const planted = { refiled: [], wsVariants: [], nearDup: [], junk: [], normalize: [], quarantine: [], crossFile: null, leak: null };

// (1) Exact duplicates: the same ticket filed again under a new id. Same depot and line (the same
// people re-filed it), sometimes a different priority.
const REFILE_PLAN = [
  [2025, 2025], [2025, 2025], [2025, 2025], [2025, 2025], [2025, 2025], [2025, 2025],
  [2026, 2026], [2026, 2026], [2026, 2026], [2026, 2026],
  [2025, 2026], [2025, 2026], [2025, 2026], [2025, 2026], [2025, 2026],
];
for (const [fromYear, toYear] of REFILE_PLAN) {
  const orig = pickRegular(fromYear, (t) => wc(t.body) >= 15);
  const copy = { ...orig, year: toYear, priority: pickPriority(rP), kind: "refiled", of: orig };
  insert(toYear, copy, orig);
  planted.refiled.push(copy);
}

// (2) Copies that differ only in whitespace, identical once normalized. Two need a multi-line
// original, since a \r\n variant of a one-line body would not differ at all.
const WS_VARIANTS = [
  { year: 2025, how: "\\n line endings replaced by \\r\\n", multiline: true, apply: (b) => b.replace(/\n/g, "\r\n") },
  { year: 2025, how: "two trailing spaces after the text and a trailing tab", multiline: false, apply: (b) => `${b}  \t` },
  { year: 2026, how: "\\r\\n line endings, trailing spaces on each line, and a final \\r\\n", multiline: true, apply: (b) => b.split("\n").map((l) => `${l}   `).join("\r\n") + "\r\n" },
  { year: 2026, how: "a leading blank line and trailing spaces", multiline: false, apply: (b) => `\n${b}   ` },
];
for (const v of WS_VARIANTS) {
  const orig = pickRegular(v.year, (t) => (v.multiline ? t.body.includes("\n") : !t.body.includes("\n")) && wc(t.body) >= 15);
  const copy = { ...orig, body: v.apply(orig.body), kind: "ws-variant", of: orig, how: v.how };
  insert(v.year, copy, orig);
  planted.wsVariants.push(copy);
}

// (3) Near duplicates: five templated tickets, each with four variants (20 variants in all).
NEAR_DUP_TEMPLATES.forEach((tpl, g) => {
  const baseYear = g < 3 ? 2025 : 2026;
  const depot = rP.weighted(DEPOTS, (d) => d.weight);
  const car = rP.pick(depot.cars);
  const day = rP.int(3, 25);
  const month = rP.pick(MONTHS);
  const make = (c, d) => fill(tpl.text, { car: String(c), day: String(d), month }, rP);
  const otherCar = () => rP.pick(depot.cars.filter((c) => c !== car));
  const otherDay = () => day + rP.pick([-2, -1, 1, 2, 7]);
  const base = { year: baseYear, depot: depot.name, line: rP.pick(depot.lines), priority: "P4", body: make(car, day), kind: "near-base", group: tpl.name };
  insert(baseYear, base);
  planted.nearDup.push(base);
  const variants = [
    { change: "car number", car: otherCar(), day, year: baseYear },
    { change: "day of month", car, day: otherDay(), year: baseYear },
    { change: "car number and day of month", car: otherCar(), day: otherDay(), year: baseYear },
    { change: "car number and day of month", car: otherCar(), day: otherDay(), year: baseYear === 2025 ? 2026 : 2025 },
  ];
  for (const v of variants) {
    const rec = { ...base, year: v.year, body: make(v.car, v.day), kind: "near-variant", of: base, change: v.change };
    insert(v.year, rec, base);
    planted.nearDup.push(rec);
  }
});

// (4) Junk a quality filter should drop: one or two "words" of nothing.
const JUNK_TICKETS = { 2025: ["test", "asdf asdf", "=".repeat(40), ""], 2026: ["test test", "n/a", "..."] };
for (const [year, bodies] of Object.entries(JUNK_TICKETS)) {
  for (const body of bodies) {
    const depot = rP.weighted(DEPOTS, (d) => d.weight);
    const rec = { year: Number(year), depot: depot.name, line: rP.pick(depot.lines), priority: pickPriority(rP), body, kind: "junk" };
    insert(Number(year), rec);
    planted.junk.push(rec);
  }
}

// (5) Text that needs normalization: regular tickets whose body is rewritten with odd characters.
// Each rewrite leaves the normalized text equal to the clean original, which was checked distinct.
const toFullwidth = (s) => s.replace(/[0-9]/g, (d) => String.fromCharCode(0xff10 + Number(d)));
function insertAtSpaces(s, ch, k, r) {
  const spaces = [...s.matchAll(/ /g)].map((m) => m.index);
  const at = r.sample(spaces, Math.min(k, spaces.length)).sort((a, b) => b - a);
  let out = s;
  for (const i of at) out = out.slice(0, i) + ch + out.slice(i);
  return out;
}
function zeroWidthInWords(s, k, r) {
  const spots = [...s.matchAll(/[a-z]{7,}/g)].map((m) => m.index + 3);
  const at = r.sample(spots, Math.min(k, spots.length)).sort((a, b) => b - a);
  let out = s;
  for (const i of at) out = out.slice(0, i) + "\u200b" + out.slice(i);
  return out;
}
const TEXT_FIXES = [
  { year: 2025, what: "fullwidth digits (U+FF10-FF19) for every digit", pred: (b) => /\d/.test(b), apply: toFullwidth },
  { year: 2026, what: "fullwidth digits (U+FF10-FF19) for every digit", pred: (b) => /\d{4}/.test(b), apply: toFullwidth },
  { year: 2025, what: "no-break spaces (U+00A0) between numbers and units and after \"car\"", pred: (b) => /\d (mm|A|seconds|minutes|newtons|degrees)\b/.test(b),
    apply: (b) => b.replace(/(\d) (mm|A|seconds|minutes|newtons|degrees)\b/g, "$1\u00a0$2").replace(/\bcar (\d)/g, "car\u00a0$1") },
  { year: 2026, what: "zero-width spaces (U+200B) inside three words", pred: (b) => (b.match(/[a-z]{7,}/g) ?? []).length >= 3, apply: (b) => zeroWidthInWords(b, 3, rP) },
  { year: 2025, what: "a BEL control character (U+0007) before a space", pred: (b) => b.includes(". "), apply: (b) => b.replace(". ", ".\u0007 ") },
  { year: 2025, what: "ligatures \ufb01 (U+FB01) and \ufb02 (U+FB02) for fi and fl", pred: (b) => /fi|fl/.test(b), apply: (b) => b.replace(/fi/g, "\ufb01").replace(/fl/g, "\ufb02") },
  { year: 2026, what: "ligatures \ufb01 (U+FB01) and \ufb02 (U+FB02) for fi and fl", pred: (b) => /fi|fl/.test(b), apply: (b) => b.replace(/fi/g, "\ufb01").replace(/fl/g, "\ufb02") },
  // This one changes the layout for good: normalization leaves one blank line between the lines.
  { year: 2026, what: "trailing spaces on every line and runs of three blank lines between lines", pred: (b) => b.includes("\n"), apply: (b) => b.split("\n").map((l) => `${l}  `).join("\n\n\n\n"), layout: true },
  { year: 2025, what: "\\r\\n line endings plus two blank lines and trailing spaces at the end", pred: (b) => b.includes("\n"), apply: (b) => b.replace(/\n/g, "\r\n") + "  \r\n\r\n\r\n" },
];
for (const fx of TEXT_FIXES) {
  const t = pickRegular(fx.year, (x) => fx.pred(x.body));
  const before = t.body;
  t.body = fx.apply(before);
  const same = normalizeText(t.body) === normalizeText(before);
  if (t.body === before || same === Boolean(fx.layout)) throw new Error(`text fix did not apply cleanly: ${fx.what}`);
  t.kind = "needs-normalization";
  t.what = fx.what;
  planted.normalize.push(t);
}

// (6) The leaked protected passage, pasted by a fitter into an otherwise ordinary wheel-flat ticket.
{
  const depot = depotByName["Saltings"];
  const car = rP.pick(depot.cars);
  const body =
    `Car ${car} came back from L10 with a loud thump from the leading bogie after an emergency stop at Weir Bridge. ` +
    `${LEAKED_SENTENCE} Measured the flat on axle 2 at 41 mm, which is over the 35 mm limit, so the car is stopped ` +
    `and booked onto the wheel lathe at Harrow Lane for Thursday night.`;
  const rec = { year: 2026, depot: depot.name, line: "L10", priority: "P2", body, kind: "leak" };
  if (!pool.tryAdd(body)) throw new Error("leak ticket collides with an ordinary ticket");
  insert(2026, rec);
  planted.leak = rec;
}

// (7) A shift note that was also filed as a ticket, verbatim. The note is drawn now so that the
// ticket can carry it; it is placed among the other notes later. It is multi-line and contains
// commas, so matching it also proves the CSV reader handles quoting.
const rN = new Rand("notes");
const crossNote = (() => {
  const depot = depotByName["Quayside"];
  const body = pool.draw(() => {
    const b = noteBody(rN, depot, null);
    return b.includes("\n") && b.includes(",") && !b.includes("the open ticket") ? b : null;
  }, "cross-file note");
  return { depot: depot.name, role: "shift supervisor", body, kind: "cross-file" };
})();
{
  const rec = { year: 2026, depot: crossNote.depot, line: "L2", priority: "P3", body: crossNote.body, kind: "cross-file" };
  insert(2026, rec);
  crossNote.ticket = rec;
}

// (8) Records that cannot be used, for the quarantine: a truncated line in 2025 and a ticket with no
// body field in 2026. One in about two hundred is well under the pipeline's 1 % tolerance.
{
  const t = regularTicket(rP, 2025);
  t.kind = "malformed";
  insert(2025, t);
  planted.quarantine.push(t);
  const depot = depotByName["Westmere"];
  const m = { year: 2026, depot: depot.name, line: depot.lines[0], priority: "P3", kind: "missing-body" };
  insert(2026, m);
  planted.quarantine.push(m);
}

// Ids follow file order, like a ticketing system numbering as tickets arrive.
for (const year of [2025, 2026]) {
  files[year].forEach((t, i) => (t.id = `T-${year}-${String(i + 1).padStart(4, "0")}`));
}

function ticketLine(t) {
  const obj = { ticket_id: t.id, depot: t.depot, year: t.year, line: t.line, priority: t.priority };
  if (t.kind !== "missing-body") obj.body = t.body;
  const json = JSON.stringify(obj);
  if (t.kind === "malformed") {
    // Cut the line 30 characters into the body string: an export that died mid-record.
    const cut = json.indexOf('"body":"') + 8 + 30;
    t.lineText = json.slice(0, cut);
    return t.lineText;
  }
  return json;
}

// ---------------------------------------------------------------------------------------------
// Building the shift notes
// ---------------------------------------------------------------------------------------------

const ticketIdsByDepot = new Map();
for (const year of [2025, 2026])
  for (const t of files[year]) {
    if (t.kind !== "regular") continue;
    if (!ticketIdsByDepot.has(t.depot)) ticketIdsByDepot.set(t.depot, []);
    ticketIdsByDepot.get(t.depot).push(t.id);
  }

const notes = [];
for (let i = 0; i < 126; i++) {
  const depot = rN.weighted(DEPOTS, (d) => d.weight);
  const body = pool.draw(() => noteBody(rN, depot, ticketIdsByDepot), "note");
  notes.push({ depot: depot.name, role: rN.pick(ROLES), body, kind: "regular" });
}
notes.splice(rN.int(0, notes.length), 0, crossNote);
const JUNK_NOTES = ["asdf", "see above", "-"];
for (const body of JUNK_NOTES) {
  const rec = { depot: rN.weighted(DEPOTS, (d) => d.weight).name, role: rN.pick(ROLES), body, kind: "junk" };
  notes.splice(rN.int(0, notes.length), 0, rec);
  planted.junk.push(rec);
}
const NOTE_FIXES = [
  { what: "no-break spaces (U+00A0) after \"car\" and \"road\"", pred: (b) => /\b(car|road) \d/.test(b), apply: (b) => b.replace(/\b(car|road) (\d)/g, "$1\u00a0$2") },
  { what: "zero-width spaces (U+200B) inside two words", pred: (b) => (b.match(/[a-z]{7,}/g) ?? []).length >= 2, apply: (b) => zeroWidthInWords(b, 2, rN) },
  { what: "a BEL control character (U+0007) before a space", pred: (b) => b.includes(" "), apply: (b) => insertAtSpaces(b, "\u0007", 1, rN) },
  { what: "\\r\\n line endings inside the quoted field", pred: (b) => b.includes("\n"), apply: (b) => b.replace(/\n/g, "\r\n") },
  { what: "fullwidth digits (U+FF10-FF19) for every digit", pred: (b) => /\d/.test(b), apply: toFullwidth },
];
const usedNotes = new Set();
for (const fx of NOTE_FIXES) {
  const n = rN.pick(notes.filter((x) => x.kind === "regular" && !usedNotes.has(x) && fx.pred(x.body)));
  usedNotes.add(n);
  const before = n.body;
  n.body = fx.apply(before);
  if (n.body === before || normalizeText(n.body) !== normalizeText(before)) throw new Error(`note fix did not apply cleanly: ${fx.what}`);
  n.kind = "needs-normalization";
  n.what = fx.what;
  planted.normalize.push(n);
}
notes.forEach((n, i) => (n.id = `SN-${String(i + 1).padStart(4, "0")}`));
planted.crossFile = crossNote;

// RFC 4180 quoting: a field is quoted when it holds a comma, a quote or a line break, and quotes
// inside are doubled. Records end in \n (not \r\n) so that the only \r in the file are the planted ones.
const csvField = (s) => (/[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
const notesCsv =
  ["note_id,depot,author_role,body", ...notes.map((n) => [n.id, n.depot, n.role, n.body].map(csvField).join(","))].join("\n") + "\n";

// ---------------------------------------------------------------------------------------------
// Manuals
// ---------------------------------------------------------------------------------------------

const rM = new Rand("manuals");
const manualFiles = [];
for (const m of MANUALS) {
  const text = renderManual(m, rM, m.revision);
  if (m.code === "MN-06") {
    manualFiles.push({ name: `${m.code}-${m.slug}.txt`, text: pdfArtefacts(text, rM), m, clean: text });
  } else if (m.code === DUPLICATE_REVISION.code) {
    const older = text.replace(/^Revision: .*$/m, `Revision: ${DUPLICATE_REVISION.older[0]}    Issued: ${DUPLICATE_REVISION.older[1]}    Supersedes: ${DUPLICATE_REVISION.older[2]}`);
    manualFiles.push({ name: `${m.code}-${m.slug}-rev-${DUPLICATE_REVISION.older[0]}.txt`, text: older, m });
    manualFiles.push({ name: `${m.code}-${m.slug}-rev-${m.revision[0]}.txt`, text, m });
  } else {
    manualFiles.push({ name: `${m.code}-${m.slug}.txt`, text, m });
  }
}

// ---------------------------------------------------------------------------------------------
// Self-check: re-read what is about to be written and confirm that the planted problems are the
// only ones, so the README is true by construction. Any surprise stops the script.
// ---------------------------------------------------------------------------------------------

function parseCsv(text) {
  const rows = [];
  let row = [], field = "", i = 0, quoted = false;
  while (i < text.length) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') (field += '"'), (i += 2);
      else if (c === '"') (quoted = false), i++;
      else (field += c), i++;
    } else if (c === '"') (quoted = true), i++;
    else if (c === ",") row.push(field), (field = ""), i++;
    else if (c === "\n") row.push(field), rows.push(row), (row = []), (field = ""), i++;
    else (field += c), i++;
  }
  if (field || row.length) row.push(field), rows.push(row);
  return rows;
}

const ticketText = { 2025: files[2025].map(ticketLine).join("\n") + "\n", 2026: files[2026].map(ticketLine).join("\n") + "\n" };

function selfCheck() {
  const problems = [];
  const docs = [];
  const bad = [];
  for (const year of [2025, 2026]) {
    ticketText[year].split("\n").slice(0, -1).forEach((line, i) => {
      let o;
      try {
        o = JSON.parse(line);
      } catch {
        bad.push(`tickets-${year}:${i + 1}`);
        return;
      }
      if (typeof o.body !== "string") return bad.push(`tickets-${year}:${i + 1}`);
      docs.push({ id: o.ticket_id, text: o.body });
    });
  }
  const rows = parseCsv(notesCsv);
  if (rows[0].join(",") !== "note_id,depot,author_role,body") problems.push("csv header");
  for (const row of rows.slice(1)) {
    if (row.length !== 4) problems.push(`csv row ${row[0]} has ${row.length} fields`);
    docs.push({ id: row[0], text: row[3] });
  }
  for (const f of manualFiles) docs.push({ id: f.name, text: f.text });

  const expectBad = ["tickets-2025:" + (files[2025].indexOf(planted.quarantine[0]) + 1), "tickets-2026:" + (files[2026].indexOf(planted.quarantine[1]) + 1)];
  if (bad.join() !== expectBad.join()) problems.push(`unreadable records ${bad} != ${expectBad}`);

  const junkIds = new Set(planted.junk.map((x) => x.id));
  const real = docs.filter((d) => !junkIds.has(d.id));
  for (const d of docs) if (wc(normalizeText(d.text)) < 5 && !junkIds.has(d.id)) problems.push(`${d.id} is unexpectedly short`);
  for (const d of docs) if (junkIds.has(d.id) && wc(normalizeText(d.text)) > 2) problems.push(`${d.id} junk is too long`);

  // Exact duplicates after normalization.
  const expectSame = new Set();
  const key = (a, b) => [a, b].sort().join(" ");
  for (const c of [...planted.refiled, ...planted.wsVariants]) expectSame.add(key(c.id, c.of.id));
  expectSame.add(key(crossNote.id, crossNote.ticket.id));
  const byNorm = new Map();
  for (const d of real) {
    const k = normalizeText(d.text);
    if (!byNorm.has(k)) byNorm.set(k, []);
    byNorm.get(k).push(d.id);
  }
  const foundSame = new Set();
  for (const ids of byNorm.values()) for (let i = 0; i < ids.length; i++) for (let j = i + 1; j < ids.length; j++) foundSame.add(key(ids[i], ids[j]));
  for (const k of foundSame) if (!expectSame.has(k)) problems.push(`unplanned exact duplicate: ${k}`);
  for (const k of expectSame) if (!foundSame.has(k)) problems.push(`planted exact duplicate not found: ${k}`);

  // Near duplicates (word 5-gram Jaccard), between records that are not exact duplicates.
  const expectNear = new Map();
  const groups = new Map();
  for (const t of planted.nearDup) {
    const g = t.group;
    if (!groups.has(g)) groups.set(g, []);
    groups.get(g).push(t.id);
  }
  for (const ids of groups.values()) for (let i = 0; i < ids.length; i++) for (let j = i + 1; j < ids.length; j++) expectNear.set(key(ids[i], ids[j]), null);
  const dupManuals = manualFiles.filter((f) => f.m.code === DUPLICATE_REVISION.code).map((f) => f.name);
  expectNear.set(key(dupManuals[0], dupManuals[1]), null);
  const sets = real.map((d) => ({ id: d.id, norm: normalizeText(d.text), p: profile(d.text), c5: charShingles(d.text) }));
  const maxOther = { w5: 0, w3: 0, c5: 0 };
  let minPlantedC5 = 1;
  for (let i = 0; i < sets.length; i++)
    for (let j = i + 1; j < sets.length; j++) {
      if (sets[i].norm === sets[j].norm) continue;
      const k = key(sets[i].id, sets[j].id);
      const sim = similarity(sets[i].p, sets[j].p);
      const c5 = jaccard(sets[i].c5, sets[j].c5);
      if (expectNear.has(k)) {
        expectNear.set(k, sim.w5);
        minPlantedC5 = Math.min(minPlantedC5, c5);
      } else {
        if (tooSimilar(sim) || c5 >= CHAR_LIMIT) problems.push(`unplanned near duplicate ${k}: 5-gram ${sim.w5.toFixed(2)}, 3-gram ${sim.w3.toFixed(2)}, char ${c5.toFixed(2)}`);
        maxOther.w5 = Math.max(maxOther.w5, sim.w5);
        maxOther.w3 = Math.max(maxOther.w3, sim.w3);
        maxOther.c5 = Math.max(maxOther.c5, c5);
      }
    }
  const nearScores = [...expectNear.values()];
  if (nearScores.some((s) => s === null || s < 0.6)) problems.push(`a planted near duplicate scores below 0.6: ${nearScores}`);

  // Each variant differs from its base in one or two words.
  for (const v of planted.nearDup.filter((t) => t.kind === "near-variant")) {
    const a = v.body.split(" "), b = v.of.body.split(" ");
    const diff = a.length === b.length ? a.filter((w, i) => w !== b[i]).length : Infinity;
    v.wordsChanged = diff;
    v.jaccard = jaccard(shingles(v.body), shingles(v.of.body));
    if (diff < 1 || diff > 2) problems.push(`${v.id} differs from ${v.of.id} in ${diff} words`);
    if (wc(v.of.body) < 40) problems.push(`${v.of.id} is under 40 words`);
  }

  // Protected passages: only the planted ticket shares a 13-word run with them.
  const grams = (s) => {
    const w = wordsOf(s);
    const out = new Set();
    for (let i = 0; i + 13 <= w.length; i++) out.add(w.slice(i, i + 13).join(" "));
    return out;
  };
  const protectedGrams = new Set(EVAL_PASSAGES.flatMap((p) => [...grams(p)]));
  const leaking = docs.filter((d) => [...grams(d.text)].some((g) => protectedGrams.has(g))).map((d) => d.id);
  if (leaking.join() !== planted.leak.id) problems.push(`protected-passage overlap in ${leaking}, expected ${planted.leak.id}`);

  if (problems.length) throw new Error("self-check failed:\n  " + problems.join("\n  "));
  return { maxOther, minPlantedC5, nearScores, docs: docs.length };
}
const check = selfCheck();

// ---------------------------------------------------------------------------------------------
// Writing
// ---------------------------------------------------------------------------------------------

// gzipSync writes mtime 0 and no file name; the OS byte (offset 9) is pinned to 255 ("unknown") so
// the bytes do not depend on the platform that ran the script.
function gzip(text) {
  const gz = gzipSync(Buffer.from(text, "utf8"), { level: 9 });
  gz[9] = 0xff;
  return gz;
}

const outputs = [];
const put = (rel, data) => outputs.push({ rel, data: typeof data === "string" ? Buffer.from(data, "utf8") : data });
put("tickets/tickets-2025.jsonl.gz", gzip(ticketText[2025]));
put("tickets/tickets-2026.jsonl.gz", gzip(ticketText[2026]));
put("notes/shift-notes.csv", notesCsv);
for (const f of manualFiles) put(`manuals/${f.name}`, f.text);
put("protected/eval-passages.txt", EVAL_PASSAGES.join("\n\n") + "\n");

// ---------------------------------------------------------------------------------------------
// README
// ---------------------------------------------------------------------------------------------

function readme() {
  const L = [];
  const count = (arr, pred) => arr.filter(pred).length;
  const t25 = files[2025], t26 = files[2026];
  const manualWords = manualFiles.map((f) => [f.name, wc(normalizeText(f.text))]);
  const quoted = notes.filter((n) => /[",\r\n]/.test(n.body));
  const withQuotes = count(notes, (n) => n.body.includes('"'));
  const withBreaks = count(notes, (n) => /[\r\n]/.test(n.body));
  const baseWords = planted.nearDup.filter((t) => t.kind === "near-base").map((t) => wc(t.body));

  L.push("# sample-data: the demo corpus", "");
  L.push("Invented paperwork of an invented tram depot network, used by the demo pipeline and the end-to-end tests.");
  L.push("Every word is generated by `scripts/make-sample-data.mjs` from its own templates and word lists with a seeded");
  L.push("PRNG; there are no real people, companies or copied text. Do not edit these files by hand: change the script");
  L.push("and run `node scripts/make-sample-data.mjs`. Two runs give byte-identical files (the gzip header carries mtime 0).");
  L.push("The script re-reads its own output before writing and stops if the data holds any duplicate, look-alike, short");
  L.push("record or leaked passage other than the ones listed below, so this README and the data cannot drift apart.", "");

  L.push("## Files", "");
  L.push("| file | format | records | notes |", "| --- | --- | --- | --- |");
  L.push(`| tickets/tickets-2025.jsonl.gz | gzipped JSON lines | ${t25.length} lines | one line is truncated JSON |`);
  L.push(`| tickets/tickets-2026.jsonl.gz | gzipped JSON lines | ${t26.length} lines | one ticket has no \`body\` |`);
  L.push(`| notes/shift-notes.csv | CSV with header, RFC 4180 quoting | ${notes.length} rows | ${quoted.length} bodies need quoting; ${withQuotes} contain \`"\`, ${withBreaks} contain line breaks |`);
  for (const [name, w] of manualWords) L.push(`| manuals/${name} | plain text | 1 document | ${w} words |`);
  L.push(`| protected/eval-passages.txt | plain text, paragraphs separated by a blank line | ${EVAL_PASSAGES.length} passages | stand-in for a protected evaluation set; not training input |`);
  L.push("");
  L.push(`In all: ${t25.length + t26.length + notes.length + manualFiles.length} input records (${t25.length + t26.length} ticket lines, ${notes.length} notes, ${manualFiles.length} manuals), of which 2 cannot be used.`, "");

  L.push("## Fields", "");
  L.push("Tickets: `ticket_id` (`T-2025-0001`), `depot`, `year` (number), `line` (tram line, `L1` to `L15`), `priority` (`P1` most urgent to `P4`), `body` (the text).");
  L.push("Shift notes: `note_id` (`SN-0001`), `depot`, `author_role`, `body`. Manuals: the whole file is the text; they have no depot.", "");
  L.push("The text field is `body` in both tickets and notes. Split by `depot`, the group key: every record of a depot lands in the same split.");
  L.push("Records without a depot (the manuals) fall back to their own id.", "");
  L.push("| depot | tickets 2025 | tickets 2026 | notes |", "| --- | --- | --- | --- |");
  for (const d of DEPOTS) L.push(`| ${d.name} | ${count(t25, (t) => t.depot === d.name)} | ${count(t26, (t) => t.depot === d.name)} | ${count(notes, (n) => n.depot === d.name)} |`);
  L.push("");
  L.push("With eight groups a hash-based group split puts each depot in val or test with probability 0.1 each, so whether");
  L.push("both held-out splits are non-empty depends on the seed; the demo pipeline should use a seed for which they are.", "");

  L.push("## Deliberate problems", "");
  L.push("\"Normalized\" below means: NFKC, `\\r\\n` and `\\r` to `\\n`, control and zero-width characters removed (tabs and");
  L.push("newlines kept), trailing spaces stripped, blank-line runs collapsed to one, trimmed.", "");

  L.push("### 1. Records that cannot be used (quarantine): 2", "");
  const [mal, nob] = planted.quarantine;
  L.push(`- tickets-2025.jsonl.gz line ${t25.indexOf(mal) + 1}: truncated JSON object (\`${mal.id}\`, cut 30 characters into \`body\`, no closing quote or brace).`);
  L.push(`- tickets-2026.jsonl.gz line ${t26.indexOf(nob) + 1}: \`${nob.id}\` has every field except \`body\`.`);
  L.push("", `That is 1 of ${t25.length} and 1 of ${t26.length} lines, 0.5 % each, under the default 1 % tolerance.`, "");

  L.push(`### 2. Exact duplicates: ${planted.refiled.length + planted.wsVariants.length + 1} copies`, "");
  L.push(`Re-filed tickets, body byte-identical to an earlier ticket (same depot and line; ${count(planted.refiled, (c) => c.year !== c.of.year)} of them re-filed the next year):`, "");
  L.push("| copy | original |", "| --- | --- |");
  for (const c of planted.refiled) L.push(`| ${c.id} | ${c.of.id} |`);
  L.push("", "Copies that differ only in whitespace, identical once normalized:", "");
  L.push("| copy | original | difference |", "| --- | --- | --- |");
  for (const c of planted.wsVariants) L.push(`| ${c.id} | ${c.of.id} | ${c.how} |`);
  L.push("", `Across files: shift note ${crossNote.id} (multi-line, with commas) was also filed as ticket ${crossNote.ticket.id} with the same body.`);
  L.push("");

  L.push(`### 3. Near duplicates: ${count(planted.nearDup, (t) => t.kind === "near-variant")} templated tickets and one manual`, "");
  L.push(`Five templated tickets of ${Math.min(...baseWords)} to ${Math.max(...baseWords)} words, each copied four times with only the car number and/or the day of the month changed.`);
  L.push("Jaccard is over word 5-gram shingles of the normalized, lower-cased text.", "");
  L.push("| template | base | variant | changed | words changed | Jaccard to base |", "| --- | --- | --- | --- | --- | --- |");
  for (const v of planted.nearDup.filter((t) => t.kind === "near-variant"))
    L.push(`| ${v.group} | ${v.of.id} | ${v.id} | ${v.change} | ${v.wordsChanged} | ${v.jaccard.toFixed(2)} |`);
  L.push("");
  L.push(`Manual ${DUPLICATE_REVISION.code} exists twice: \`${manualFiles.filter((f) => f.m.code === DUPLICATE_REVISION.code).map((f) => f.name).join("` and `")}\`; the files differ only in the \`Revision:\` line.`);
  L.push(`Planted pairs (variants among themselves too) score ${Math.min(...check.nearScores).toFixed(2)} to ${Math.max(...check.nearScores).toFixed(2)}.`);
  L.push(`Every other pair of distinct records scores below ${LIMIT.w5} on word 5-grams (highest ${check.maxOther.w5.toFixed(3)}) and below ${LIMIT.w3} on word 3-grams (highest ${check.maxOther.w3.toFixed(3)}).`);
  L.push(`On character 5-grams (whitespace collapsed) planted pairs score ${check.minPlantedC5.toFixed(2)} or more and every other pair below ${CHAR_LIMIT} (highest ${check.maxOther.c5.toFixed(3)}).`, "");

  L.push(`### 4. Junk a quality filter should drop: ${planted.junk.length}`, "");
  L.push("| id | body |", "| --- | --- |");
  for (const j of planted.junk) L.push(`| ${j.id} | ${j.body === "" ? "(empty string)" : "`" + j.body + "`"} |`);
  L.push("", "Every other record has at least 5 words after normalization.", "");

  L.push(`### 5. Text that needs normalization: ${planted.normalize.length} records and one manual`, "");
  L.push("Each of these normalizes to a clean text that occurs nowhere else.", "");
  L.push("| id | what |", "| --- | --- |");
  for (const t of planted.normalize) L.push(`| ${t.id} | ${t.what} |`);
  const mn06 = manualFiles.find((f) => f.m.code === "MN-06");
  L.push(`| ${mn06.name} | exported-from-PDF look: \\r\\n line endings, ligatures \ufb01 and \ufb02, trailing spaces, and, at the two page breaks, runs of blank lines, a footer line (\`page 1 of 3\`, \`page 2 of 3\`) and a form feed (U+000C) |`);
  L.push("");

  L.push("### 6. A protected passage inside the training data: 1", "");
  L.push(`Ticket ${planted.leak.id} contains, word for word, the first sentence (${wc(LEAKED_SENTENCE)} words) of passage 2 of`);
  L.push("`protected/eval-passages.txt`. No other record shares a run of 13 words with any protected passage.", "");

  L.push("## Everything else", "");
  L.push("The remaining tickets and notes are distinct: none is a copy or a look-alike of another, by the limits in section 3.");
  L.push("Ticket bodies run from 2 to 8 sentences in four shapes (prose, labelled fields, terse, unresolved).");
  L.push("Depot names, stops, tram classes (41, 47, 52, 60), car numbers, fault codes and manual numbers are all made up.");
  return L.join("\n") + "\n";
}
put("README.md", readme());

for (const sub of ["tickets", "notes", "manuals", "protected"]) fs.rmSync(path.join(OUT, sub), { recursive: true, force: true });
for (const o of outputs) {
  const p = path.join(OUT, o.rel);
  fs.mkdirSync(path.dirname(p), { recursive: true });
  fs.writeFileSync(p, o.data);
}

let total = 0;
for (const o of outputs) {
  total += o.data.length;
  console.log(`${createHash("sha256").update(o.data).digest("hex")}  ${o.data.length.toString().padStart(7)}  ${o.rel}`);
}
console.log(`${outputs.length} files, ${total} bytes, ${check.docs} readable records checked`);
