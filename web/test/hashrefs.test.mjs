// Tests of the build's hashed-name step (scripts/hashrefs.mjs): run with `npm test`.
// The metafile cases come from real esbuild builds into a temporary folder, so the
// helper is checked against what esbuild actually writes, not a hand-made copy.
import { test } from "node:test";
import assert from "node:assert/strict";
import * as esbuild from "esbuild";
import { mkdtemp, readdir, rm, writeFile } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join, relative } from "node:path";
import { entryOutputs, linkHashed } from "../scripts/hashrefs.mjs";

// esbuild's "[hash]" is eight characters of base32 (A–Z, 2–7); the server's
// immutable-cache rule (server/assets.go hashedName) expects "-" + 8 of [A-Z0-9].
const hashed = /^app-[A-Z0-9]{8}\.(js|css)$/;

async function buildOnce(dir, css) {
  await writeFile(join(dir, "style.css"), css);
  await writeFile(join(dir, "main.js"), `import "./style.css";\nexport const depthM = 4000;\n`);
  const out = join(dir, "dist");
  const r = await esbuild.build({
    entryPoints: { app: join(dir, "main.js") },
    bundle: true,
    format: "esm",
    outdir: out,
    entryNames: "[name]-[hash]",
    metafile: true,
    logLevel: "silent",
  });
  return entryOutputs(r.metafile, relative(process.cwd(), join(dir, "main.js")), relative(process.cwd(), out));
}

test("entryOutputs finds esbuild's hashed bundle and stylesheet; the names follow the content", async () => {
  const dir = await mkdtemp(join(tmpdir(), "ridgeflank-hash-"));
  try {
    const a = await buildOnce(dir, "body { color: #123456; }\n");
    assert.match(a.js, hashed);
    assert.match(a.css, hashed);
    const files = await readdir(join(dir, "dist"));
    assert.ok(files.includes(a.js) && files.includes(a.css), `${a.js}, ${a.css} not in ${files}`);
    const same = await buildOnce(dir, "body { color: #123456; }\n");
    assert.deepEqual(same, a, "the same content must give the same names");
    const changed = await buildOnce(dir, "body { color: #654321; }\n");
    assert.notEqual(changed.css, a.css, "a changed stylesheet must change its name");
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
});

test("entryOutputs refuses a metafile without the entry or its stylesheet", () => {
  assert.throws(() => entryOutputs({ outputs: {} }, "src/main.js", "dist"), /no JavaScript output/);
  assert.throws(
    () => entryOutputs({ outputs: { "dist/app-ABCDEFGH.js": { entryPoint: "src/main.js" } } }, "src/main.js", "dist"),
    /no stylesheet/,
  );
});

test("linkHashed rewrites both references once and refuses a page without them", () => {
  const html = `<link rel="stylesheet" href="app.css">\n<script type="module" src="app.js"></script>`;
  const got = linkHashed(html, { js: "app-ABCDEFGH.js", css: "app-QRSTUVWX.css" });
  assert.equal(got, `<link rel="stylesheet" href="app-QRSTUVWX.css">\n<script type="module" src="app-ABCDEFGH.js"></script>`);
  assert.throws(() => linkHashed(`<script src="app.js"></script>`, { js: "a", css: "b" }), /href="app.css" exactly once, found 0/);
  assert.throws(() => linkHashed(html + html, { js: "a", css: "b" }), /exactly once, found 2/);
});
