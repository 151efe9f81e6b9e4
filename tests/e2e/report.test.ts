// `siftpack report` on the demo build, opened in a real headless browser (Debian's chromium driven by playwright-core).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { pathToFileURL } from "node:url";
import { chromium, type BrowserContext, type Page } from "playwright-core";
import { siftpack, tempDir } from "./cli.js";
import { decodePng, inkStats } from "../report/png-pixels.js";
import type { Manifest } from "../../src/output/manifest.js";

const CHROMIUM = "/usr/bin/chromium";
// Flags for a browser that talks to nobody: no background services, no updates, no sync, no QUIC.
const FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"];

let out: string;
let reportPath: string;
let manifest: Manifest;
let statsJson: unknown;
let context: BrowserContext;
let profile: string;
let page: Page;
const requests: string[] = [];
const consoleErrors: string[] = [];

beforeAll(async () => {
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: the report test needs Debian's chromium (apt-get install chromium; .ci/run installs it)`);
  out = join(tempDir("report"), "demo");
  const run = siftpack(["run", "pipelines/demo.yaml", "--out", out]);
  expect(run.code, run.stderr).toBe(0);
  const rep = siftpack(["report", out]);
  expect(rep.code, rep.stderr).toBe(0);
  reportPath = `${out}.report.html`; // beside the build, where a rebuild leaves it
  expect(rep.stdout).toContain(`wrote ${reportPath}`);
  manifest = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
  const stats = siftpack(["stats", out, "--json"]);
  expect(stats.code).toBe(0);
  statsJson = JSON.parse(stats.stdout);

  profile = mkdtempSync(join(tmpdir(), "siftpack-chromium-"));
  context = await chromium.launchPersistentContext(profile, { executablePath: CHROMIUM, headless: true, args: FLAGS, viewport: { width: 1000, height: 800 } });
  // Every request is recorded; anything but the report file itself is refused.
  await context.route("**/*", (route) => {
    const url = route.request().url();
    requests.push(url);
    return url === pathToFileURL(reportPath).href ? route.continue() : route.abort();
  });
  page = await context.newPage();
  page.on("console", (m) => {
    if (m.type() === "error" || m.type() === "warning") consoleErrors.push(`${m.type()}: ${m.text()}`);
  });
  page.on("pageerror", (e) => consoleErrors.push(`pageerror: ${e.message}`));
  await page.goto(pathToFileURL(reportPath).href, { waitUntil: "load" });
});

afterAll(async () => {
  await context?.close();
  if (profile) rmSync(profile, { recursive: true, force: true });
});

describe("the demo report in a browser", () => {
  it("loads with no console errors and no request but the file itself", async () => {
    expect(consoleErrors).toEqual([]);
    expect(requests).toEqual([pathToFileURL(reportPath).href]);
    expect(await page.title()).toContain(manifest.build_hash);
  });

  it("has every section and every chart, each with visible marks", async () => {
    const sections = await page.$$eval("main > section", (els) => els.map((e) => e.id));
    expect(sections).toEqual(["records", "splits", "mixture", "lengths", "clusters", "packing", "overlap", "decontamination", "provenance"]);
    const charts = await page.$$eval("svg.chart", (svgs) =>
      svgs.map((svg) => {
        const section = svg.closest("section")!.id;
        const marks = [...svg.querySelectorAll(".mark")].map((m) => (m as SVGGraphicsElement).getBoundingClientRect()).filter((r) => r.width > 0 && r.height > 0);
        const box = svg.getBoundingClientRect();
        return { section, marks: marks.length, width: box.width, height: box.height, name: svg.querySelector("title")?.textContent ?? svg.getAttribute("aria-label") };
      }),
    );
    const bySection = (s: string) => charts.filter((c) => c.section === s);
    expect(bySection("records")).toHaveLength(1);
    expect(bySection("splits")).toHaveLength(2);
    expect(bySection("lengths")).toHaveLength(1);
    expect(bySection("packing")).toHaveLength(2); // block capacity and the attention mask
    expect(bySection("overlap")).toHaveLength(1);
    expect(bySection("decontamination")).toHaveLength(1);
    const minhash = (manifest.pipeline.resolved as { stages: { name: string; options: { method?: string } }[] }).stages.some((s) => s.name === "dedup" && s.options.method === "minhash");
    expect(bySection("clusters")).toHaveLength(minhash ? 1 : 0);
    if (!minhash) expect(await page.textContent("#clusters")).toContain("No near-duplicate stage ran");
    for (const c of charts) {
      expect(c.marks, `${c.name}`).toBeGreaterThan(0);
      expect(c.width).toBeGreaterThan(200);
      expect(c.height).toBeGreaterThan(50);
    }
  });

  it("draws bars in proportion to the figures they carry", async () => {
    const groups = await page.$$eval("[data-scale=linear]", (els) =>
      els.map((el) =>
        [...el.querySelectorAll("rect.mark")]
          .map((r) => ({ value: Number(r.getAttribute("data-value")), w: Number(r.getAttribute("width")), h: Number(r.getAttribute("height")) }))
          .filter((m) => m.value > 0),
      ),
    );
    expect(groups.length).toBeGreaterThan(3);
    for (const marks of groups) {
      const byW = marks.every((m) => Math.abs(m.w / m.value - marks[0].w / marks[0].value) * m.value < 0.02);
      const byH = marks.every((m) => Math.abs(m.h / m.value - marks[0].h / marks[0].value) * m.value < 0.02);
      expect(byW || byH, JSON.stringify(marks.slice(0, 4))).toBe(true);
    }
  });

  it("shows the manifest's figures: every tagged number equals manifest.json, and the embedded figures equal `stats --json`", async () => {
    const figs = await page.$$eval("[data-fig]", (els) => els.map((e) => ({ path: JSON.parse(e.getAttribute("data-fig")!), value: e.getAttribute("data-value"), text: e.textContent ?? "", tag: e.tagName })));
    expect(figs.length).toBeGreaterThan(150);
    const at = (path: (string | number)[]) => path.reduce<unknown>((o, k) => (o as Record<string | number, unknown>)?.[k], manifest);
    for (const f of figs) {
      const want = at(f.path);
      expect(f.value, JSON.stringify(f.path)).toBe(String(want));
      if (f.tag === "rect" || typeof want !== "number") continue;
      // What a reader sees: integers in full (with thousands separators), fractions rounded as printed.
      const shown = f.text.replace(/,/g, "").trim();
      if (!/[.%]/.test(shown)) {
        expect(shown, JSON.stringify(f.path)).toBe(String(want));
        continue;
      }
      const decimals = /\.(\d+)/.exec(shown)?.[1].length ?? 0;
      const target = shown.endsWith("%") ? 100 * want : want;
      expect(Math.abs(parseFloat(shown) - target), `${JSON.stringify(f.path)} shown as ${shown}`).toBeLessThanOrEqual(0.5 * 10 ** -decimals + 1e-9);
    }
    // The figures the issue names are all there.
    const seen = new Set(figs.map((f) => JSON.stringify(f.path)));
    for (const reason of Object.keys(manifest.records.by_reason)) expect(seen).toContain(JSON.stringify(["records", "by_reason", reason]));
    for (const source of Object.keys(manifest.records.by_source)) expect(seen).toContain(JSON.stringify(["records", "by_source", source, "tokens"]));
    for (const [split, s] of Object.entries(manifest.splits)) {
      for (const k of ["documents", "tokens", "padding_tokens", "cut_documents", "continuation_tokens"]) expect(seen).toContain(JSON.stringify(["splits", split, k]));
      s.length_histogram.forEach((_, i) => expect(seen).toContain(JSON.stringify(["splits", split, "length_histogram", i, "documents"])));
    }
    manifest.inputs.forEach((_, i) => expect(seen).toContain(JSON.stringify(["inputs", i, "xxh64"])));
    expect(seen).toContain(JSON.stringify(["build_hash"]));
    ((manifest.overlap as { pairs: unknown[] }).pairs ?? []).forEach((_, i) => expect(seen).toContain(JSON.stringify(["overlap", "pairs", i, "ngram_fraction"])));
    // Decontamination: the share of train dropped, its threshold, and the record count of every n-gram listed.
    for (const k of ["checked", "dropped", "share", "warn_share"]) expect(seen).toContain(JSON.stringify(["decontamination", 0, k]));
    (manifest.decontamination as { top_ngrams: unknown[] }[])[0].top_ngrams.forEach((_, i) => expect(seen).toContain(JSON.stringify(["decontamination", 0, "top_ngrams", i, "records"])));
    const embedded = JSON.parse((await page.textContent("#figures"))!);
    expect(embedded).toEqual(statsJson);
  });

  it("ends the funnel at the records kept", async () => {
    // The first table of the section: drops per reason.
    const rows = await page.$eval("#records table", (t) => [...t.querySelectorAll("tbody tr")].map((tr) => [...tr.children].map((c) => c.textContent ?? "")));
    expect(rows[0][2].replace(/,/g, "")).toBe(String(manifest.records.read));
    const last = rows[rows.length - 1];
    expect(last[0]).toBe("kept");
    // "left after" of the last reason equals the records kept
    expect(rows[rows.length - 2][3].replace(/,/g, "")).toBe(String(manifest.records.kept));
  });

  it("takes a screenshot that is not blank", async () => {
    const shot = await page.screenshot({ fullPage: false });
    const px = decodePng(shot);
    expect([px.width, px.height]).toEqual([1000, 800]);
    const { ink, colours } = inkStats(px);
    expect(ink).toBeGreaterThan(0.05);
    expect(colours).toBeGreaterThan(20);
  });

  it("reads as well in the dark colour scheme", async () => {
    const colours = async () => page.evaluate(() => [getComputedStyle(document.documentElement).backgroundColor, getComputedStyle(document.body).color, getComputedStyle(document.querySelector("svg.chart text")!).fill]);
    await page.emulateMedia({ colorScheme: "light" });
    const light = await colours();
    await page.emulateMedia({ colorScheme: "dark" });
    const dark = await colours();
    await page.emulateMedia({ colorScheme: "light" });
    const lum = (c: string) => {
      const [r, g, b] = c.match(/\d+/g)!.map(Number).map((v) => v / 255).map((v) => (v <= 0.03928 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4));
      return 0.2126 * r + 0.7152 * g + 0.0722 * b;
    };
    const contrast = (a: string, b: string) => (Math.max(lum(a), lum(b)) + 0.05) / (Math.min(lum(a), lum(b)) + 0.05);
    expect(lum(dark[0])).toBeLessThan(0.05);
    expect(lum(light[0])).toBeGreaterThan(0.9);
    for (const [bg, fg, chartText] of [light, dark]) {
      expect(contrast(bg, fg)).toBeGreaterThan(7);
      expect(contrast(bg, chartText)).toBeGreaterThan(7);
    }
  });

  it("prints without navigation and with the whole pipeline", async () => {
    await page.emulateMedia({ media: "print" });
    const printed = await page.evaluate(() => [getComputedStyle(document.querySelector("nav")!).display, getComputedStyle(document.querySelector("pre.yaml")!).maxHeight]);
    await page.emulateMedia({ media: "screen" });
    expect(printed).toEqual(["none", "none"]);
    const pdf = await page.pdf({ format: "A4" });
    expect(pdf.subarray(0, 5).toString("latin1")).toBe("%PDF-");
  });

  it("can be used from the keyboard: a skip link first, section links, scrollable regions focusable", async () => {
    await page.goto(pathToFileURL(reportPath).href);
    await page.keyboard.press("Tab");
    expect(await page.evaluate(() => document.activeElement?.textContent)).toBe("Skip to the report");
    await page.keyboard.press("Enter");
    expect(await page.evaluate(() => document.activeElement?.id)).toBe("main");
    // The navigation's links reach every section.
    const targets = await page.$$eval("nav a", (as) => as.map((a) => a.getAttribute("href")));
    const ids = await page.$$eval("main > section", (els) => els.map((e) => `#${e.id}`));
    expect(targets).toEqual(ids);
    // Wide tables and the pipeline text scroll from the keyboard: they take focus.
    const regions = await page.$$eval(".scroll, pre.yaml", (els) => els.map((e) => e.getAttribute("tabindex")));
    expect(regions.length).toBeGreaterThan(5);
    expect(regions.every((t) => t === "0")).toBe(true);
    // Focus is visible: a focused link gets an outline.
    await page.focus("nav a");
    await page.keyboard.press("Shift+Tab");
    await page.keyboard.press("Tab");
    expect(await page.evaluate(() => getComputedStyle(document.activeElement!).outlineStyle)).toBe("solid");
    expect(requests.every((u) => u === pathToFileURL(reportPath).href)).toBe(true);
  });

  it("decodes browser screenshots correctly (the check above relies on it)", async () => {
    const p = await context.newPage();
    await p.setViewportSize({ width: 200, height: 100 });
    await p.setContent(`<body style="margin:0;background:#fff"><div style="width:50px;height:40px;background:#0072b2"></div></body>`);
    const px = decodePng(await p.screenshot());
    await p.close();
    let blue = 0;
    for (let i = 0; i < px.rgba.length; i += 4) if (px.rgba[i] === 0x00 && px.rgba[i + 1] === 0x72 && px.rgba[i + 2] === 0xb2) blue++;
    expect(blue).toBe(50 * 40);
    expect(inkStats(px).ink).toBeCloseTo(2000 / 20000, 6);
  });
});

describe("siftpack report on the command line", () => {
  it("writes where --out says, and fails with exit 1 naming a directory without a manifest", () => {
    const target = join(tempDir("report-out"), "r.html");
    const r = siftpack(["report", out, "--out", target, "--no-excerpts"]);
    expect(r.code).toBe(0);
    const html = readFileSync(target, "utf8");
    expect(html).toContain(manifest.build_hash);
    // The shared n-grams are words of the input: quoted in the full report, left out without excerpts.
    const ngram = (manifest.decontamination as { top_ngrams: { ngram: string }[] }[])[0].top_ngrams[0].ngram;
    expect(readFileSync(reportPath, "utf8")).toContain(ngram);
    expect(html).not.toContain(ngram);
    const bad = siftpack(["report", tempDir("empty")]);
    expect(bad.code).toBe(1);
    expect(bad.stderr).toMatch(/manifest\.json: cannot read the manifest/);
  });
});
