// Builds the browser page into web/dist: bundles src/main.js (with Leaflet's
// and uPlot's CSS and images) through esbuild into content-hashed files
// (app-[hash].js, app-[hash].css, assets/[name]-[hash].*), writes index.html
// pointing at those hashed names (see hashrefs.mjs), and copies the
// Natural Earth land outline (public domain, via the world-atlas npm package) so
// the page needs no network beyond the ridgeflank service itself.
import * as esbuild from "esbuild";
import { copyFile, mkdir, readFile, readdir, rm, writeFile } from "node:fs/promises";
import { dirname, join, relative } from "node:path";
import { fileURLToPath } from "node:url";
import { entryOutputs, linkHashed } from "./hashrefs.mjs";

const root = join(dirname(fileURLToPath(import.meta.url)), "..");
const dist = join(root, "dist");
const watch = process.argv.includes("--watch");

// Empty dist but keep the committed .keep file (go:embed needs the folder).
await mkdir(dist, { recursive: true });
for (const name of await readdir(dist)) {
  if (name !== ".keep") await rm(join(dist, name), { recursive: true, force: true });
}
await writeFile(join(dist, ".keep"), "");

const entry = join(root, "src", "main.js");
const indexSource = await readFile(join(root, "src", "index.html"), "utf8");

// After every build (each rebuild when watching): write index.html with the
// hashed names of this build, and drop the app-* files of earlier rebuilds.
const hashedIndex = {
  name: "hashed-index",
  setup(build) {
    build.onEnd(async (result) => {
      if (result.errors.length > 0 || !result.metafile) return;
      const names = entryOutputs(result.metafile, relative(process.cwd(), entry), relative(process.cwd(), dist));
      await writeFile(join(dist, "index.html"), linkHashed(indexSource, names));
      const keep = new Set([names.js, names.css, names.js + ".map", names.css + ".map"]);
      for (const name of await readdir(dist)) {
        if (/^app-.*\.(js|css)(\.map)?$/.test(name) && !keep.has(name)) await rm(join(dist, name));
      }
    });
  },
};

const options = {
  entryPoints: { app: entry },
  bundle: true,
  format: "esm",
  target: ["es2022"],
  minify: !watch,
  sourcemap: watch,
  outdir: dist,
  entryNames: "[name]-[hash]",
  assetNames: "assets/[name]-[hash]",
  loader: { ".png": "file", ".svg": "file" },
  legalComments: "none",
  logLevel: "info",
  metafile: true,
  plugins: [hashedIndex],
};

await copyFile(
  join(root, "node_modules", "world-atlas", "land-50m.json"),
  join(dist, "land-50m.json"),
);

// Licence texts of everything bundled or copied into dist.
const notices = [
  ["leaflet", "map"],
  ["uplot", "charts"],
  ["topojson-client", "TopoJSON decoding"],
  ["world-atlas", "Natural Earth land outline (the data itself is public domain)"],
  ["geographiclib-geodesic", "WGS84 geodesics for drawing survey lines"],
];
let text = "Third-party software and data bundled in this page\n\n";
for (const [pkg, use] of notices) {
  const meta = JSON.parse(await readFile(join(root, "node_modules", pkg, "package.json"), "utf8"));
  const dir = join(root, "node_modules", pkg);
  const licence = await readFile(join(dir, "LICENSE"), "utf8").catch(() => readFile(join(dir, "LICENSE.txt"), "utf8"));
  text += `== ${pkg} ${meta.version} (${meta.license}); used for: ${use}\n\n${licence.trim()}\n\n`;
}
await writeFile(join(dist, "THIRD-PARTY-NOTICES.txt"), text);

if (watch) {
  const ctx = await esbuild.context(options);
  await ctx.watch();
} else {
  await esbuild.build(options);
}
