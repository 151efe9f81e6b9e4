#!/usr/bin/env node
// The invented help-desk conversations of the demo (sample-data/helpdesk/helpdesk.jsonl): depot
// technicians asking, the engineering help-desk answering. Every word comes from the templates below
// with a seeded PRNG; two runs give the same bytes. Run: node scripts/make-helpdesk-data.mjs
import { mkdirSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { mulberry32 } from "./seeded-random.mjs";

const out = join(dirname(fileURLToPath(import.meta.url)), "..", "sample-data", "helpdesk", "helpdesk.jsonl");

const rand = mulberry32(2026);
const pick = (xs) => xs[Math.floor(rand() * xs.length)];
const int = (lo, hi) => lo + Math.floor(rand() * (hi - lo + 1));

const DEPOTS = ["Harrow Lane", "Quayside", "Northfold", "Millbrook Yard", "Saltings", "Copperhill"];
const CLASSES = [41, 47, 52, 60];

// Each topic: the opening question, the answer, and optional follow-up pairs. {car}, {code}, {n} are filled in.
const TOPICS = [
  {
    q: "Car {car} shows door fault {code} on the left side after every stop. The door closes but the interlock light stays off. Is there a known fix?",
    a: "Fault {code} on a class {cls} car is usually the door-closed limit switch sitting out of line. Check the switch bracket on the leaf, set the gap to {n} mm with the feeler gauge, and run the door test from both cabs. If the light still stays off, swap the switch and log the old one as returned stock.",
    more: [
      ["The gap was fine at {n} mm. What next?", "Then look at the connector behind the door header panel: a loose pin there gives the same code. Reseat it, tie the loom back to its clip, and repeat the door test."],
      ["Do I need to take the car out of service for that?", "Yes, a door interlock fault keeps the car in until a fitter has signed the door test sheet."],
    ],
  },
  {
    q: "The pantograph on car {car} is slow to rise, about {n} seconds. The compressor sounds normal. What should I check?",
    a: "A slow rise with a healthy compressor points at the raising valve or a leaking hose. Listen at the roof valve box with the air up; if it hisses, replace the hose from the valve to the cylinder. The rise time should be under four seconds on a class {cls} car.",
    more: [
      ["No hiss at the valve box. The hose looks new.", "Then clean the raising valve filter: the strainer clogs with brake dust on cars that stand near the wash road. It is a five minute job with the air isolated."],
    ],
  },
  {
    q: "Brake pads on car {car} bogie {n} are wearing faster on one side. Is that a pad issue or a caliper issue?",
    a: "Uneven wear on one side of a bogie is almost always a sticking caliper slide, not the pads. Clean and grease both slide pins, check that the pad moves freely by hand, and fit a new pair of pads if the thin one is under the wear line.",
    more: [
      ["Which grease do we use on the slide pins?", "The white high-temperature grease from stores, not the blue general one. The blue grease hardens under brake heat."],
      ["Should I measure the disc as well?", "Yes, record the disc thickness on the job card. Below the limit stamped on the disc, it gets replaced with the pads."],
    ],
  },
  {
    q: "Saloon heating on car {car} is stuck on full. Drivers say the saloon gets very hot after {n} minutes.",
    a: "Stuck on full usually means the saloon temperature sensor has failed open. The sensor sits behind the grille above the second door. Measure it: it should read about ten kilo-ohms at room temperature. Replace it if it reads open circuit.",
    more: [["The sensor reads correctly. Anything else?", "Then check the heater contactor: a welded contactor keeps the heaters on whatever the controller asks. Swap it with the spare from the kit and test again."]],
  },
  {
    q: "Traction inverter on car {car} trips with fault {code} when pulling away on a gradient. It resets fine. What is likely?",
    a: "Fault {code} on a hill start is the inverter seeing an over-current. On class {cls} cars the usual cause is a loose phase cable lug at the motor terminal box. Torque the lugs to the value on the terminal cover, then do a test run on the depot loop.",
    more: [["Lugs were tight. The fault came back on the test run.", "Then download the inverter log with the service laptop and send it to the help-desk mailbox. We will compare it with the other cars of the batch before you change any cards."]],
  },
  {
    q: "Sand is not reaching the rail on car {car}, leading bogie. The hopper is full.",
    a: "Check the sand pipe nozzle first: it blocks with damp sand after washing. Clear it with the rod from the sanding kit, then test the sander from the cab with the car on the pit road. The sand should hit the rail just in front of the wheel.",
    more: [["The nozzle was clear. No air comes out at all.", "Then the sanding valve is not opening. Check the fuse on the sanding panel and the valve coil; a blown fuse is the more common of the two."]],
  },
  {
    q: "Wheel profile readings on car {car} show flange height {n} mm, close to the limit. Can it run until the next lathe slot?",
    a: "If the flange height is still inside the limit on the measurement sheet it may run, but book the car on the wheel lathe within seven days and measure again at the next exam. Record the readings in the wheel log so the trend is visible.",
    more: [],
  },
  {
    q: "The cab wiper on car {car} parks in the middle of the screen. The driver has reported it twice.",
    a: "A wiper that parks in the middle has a slipped arm on the spindle. Loosen the arm nut, set the blade to the park mark at the bottom of the screen, and tighten the nut again. Then run the wiper on both speeds to check it parks right.",
    more: [["It still stops in the middle on slow speed.", "Then the park switch in the motor is worn. Fit a new wiper motor from stores; the old one goes back for repair."]],
  },
];

const car = (cls) => `${cls}${String(int(1, 40)).padStart(2, "0")}`;
const code = () => `F${int(100, 899)}`;

function fill(s, v) {
  return s.replace(/\{(\w+)\}/g, (_, k) => String(v[k]));
}

function conversation(i) {
  const t = pick(TOPICS);
  const cls = pick(CLASSES);
  const v = { cls, car: car(cls), code: code(), n: int(2, 9) };
  const messages = [
    { from: "technician", value: fill(t.q, v) },
    { from: "helpdesk", value: fill(t.a, v) },
  ];
  const follow = t.more.filter(() => rand() < 0.6);
  for (const [q, a] of follow) messages.push({ from: "technician", value: fill(q, v) }, { from: "helpdesk", value: fill(a, v) });
  return { conv_id: `HD-${String(i).padStart(4, "0")}`, depot: pick(DEPOTS), messages };
}

const rows = [];
for (let i = 1; i <= 40; i++) rows.push(conversation(i));

// A long exchange: more turns than fit in one 256-token block, so packing cuts it at a turn edge.
const long = conversation(41);
for (let k = 0; k < 3; k++) {
  long.messages.push(
    { from: "technician", value: "Done that as well. The fault is still there after the test run, and the driver wants the car back for the evening peak. What else can I look at before the end of the shift?" },
    { from: "helpdesk", value: "Keep the car in. Note every step you have done on the job card, with the readings, and leave the fault active so the night fitter can see it. We will call the depot at the start of the night shift and go through the log together." },
  );
}
rows.push(long);

// A question with contact details, which the redact stage replaces.
const contact = conversation(42);
contact.messages[0].value += " You can reach me on 0161 496 0732 or at fitter.quayside@example.org if the line drops.";
rows.push(contact);

// A conversation filed twice: exact dedup removes the copy.
rows.push({ ...rows[3], conv_id: "HD-0043" });

// Malformed records, each quarantined with its line: an unknown role, an empty list, a turn without text.
rows.push({ conv_id: "HD-0044", depot: "Saltings", messages: [{ from: "driver", value: "The door chime is quiet on car 4712." }, { from: "helpdesk", value: "Please ask the depot fitter to check the chime volume." }] });
rows.push({ conv_id: "HD-0045", depot: "Northfold", messages: [] });
rows.push({ conv_id: "HD-0046", depot: "Quayside", messages: [{ from: "technician", value: "Car 5210 horn is weak, is that a known issue?" }, { from: "helpdesk" }] });

// An answer quoting, word for word, the first sentence of passage 2 of sample-data/protected/eval-passages.txt:
// decontaminate drops the conversation (its depot lands in train).
rows.push({
  conv_id: "HD-0047",
  depot: "Harrow Lane",
  messages: [
    { from: "technician", value: "Drivers report a steady thump from car 4118 at low speed. What causes that?" },
    {
      from: "helpdesk",
      value:
        "When a wheel locks under braking and slides along the rail, the small patch of steel in contact heats and cools so quickly that it hardens into a flat spot on the tread. Book the car on the wheel lathe.",
    },
  ],
});

mkdirSync(dirname(out), { recursive: true });
writeFileSync(out, rows.map((r) => JSON.stringify(r)).join("\n") + "\n");
console.log(`${out}: ${rows.length} conversations`);
