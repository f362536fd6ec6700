// Opens HTML reports in Debian's Chromium (puppeteer-core, no browser download), runs axe-core
// at each viewport width and reports violations and horizontal overflow as JSON on stdout.
// Usage: node check.mjs jobs.json   where jobs.json is
//   {"pages": [{"file": "/abs/cert.html", "widths": [390, 1280],
//               "screenshot": "/abs/shot-{width}.png" (optional), "pdf": "/abs/print.pdf" (optional)}]}
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import puppeteer from "puppeteer-core";

const require = createRequire(import.meta.url);
const axeSource = readFileSync(require.resolve("axe-core/axe.min.js"), "utf8");
const jobs = JSON.parse(readFileSync(process.argv[2], "utf8"));
const browser = await puppeteer.launch({
  executablePath: process.env.CHROMIUM || "/usr/bin/chromium",
  headless: true,
  args: ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-dev-shm-usage"],
});
const results = [];
try {
  for (const job of jobs.pages) {
    const page = await browser.newPage();
    for (const width of job.widths) {
      await page.setViewport({ width, height: 900 });
      await page.goto("file://" + job.file, { waitUntil: "load" });
      await page.evaluate(axeSource);
      const axe = await page.evaluate(async () => {
        const r = await window.axe.run(document, {
          runOnly: { type: "tag", values: ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa",
                                           "best-practice"] },
          resultTypes: ["violations"],
        });
        return r.violations.map((v) => ({ id: v.id, impact: v.impact, help: v.help,
                                          nodes: v.nodes.slice(0, 3).map((n) => n.target.join(" ")) }));
      });
      const layout = await page.evaluate(() => ({
        scrollWidth: document.documentElement.scrollWidth,
        innerWidth: window.innerWidth,
        fontsReady: [...document.fonts].filter((f) => f.status === "loaded").map((f) => f.family),
      }));
      if (job.screenshot) {
        await page.screenshot({ path: job.screenshot.replace("{width}", String(width)),
                                fullPage: Boolean(job.fullPage) });
      }
      results.push({ file: job.file, width, violations: axe, ...layout });
    }
    if (job.pdf) {
      await page.emulateMediaType("print");
      await page.pdf({ path: job.pdf, preferCSSPageSize: true, printBackground: true });
    }
    await page.close();
  }
} finally {
  await browser.close();
}
process.stdout.write(JSON.stringify(results, null, 1) + "\n");
