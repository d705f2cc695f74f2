// Rewrites the page's references to its entry bundle and stylesheet so index.html
// loads the content-hashed names esbuild wrote ("app-[hash].js", "app-[hash].css").
// index.html itself keeps its name and is revalidated on every load; the hashed
// files can then be cached for a year, since a change of content changes the name.

/**
 * linkHashed returns html with src="app.js" and href="app.css" replaced by the
 * hashed names. Each reference must occur exactly once: a page that lost or
 * duplicated one is an error, not a silent half-rewrite.
 * @param {string} html the source index.html
 * @param {{js: string, css: string}} names the emitted file names, relative to dist
 * @returns {string}
 */
export function linkHashed(html, names) {
  const refs = [
    [`src="app.js"`, `src="${names.js}"`],
    [`href="app.css"`, `href="${names.css}"`],
  ];
  for (const [from, to] of refs) {
    const n = html.split(from).length - 1;
    if (n !== 1) throw new Error(`index.html must hold ${from} exactly once, found ${n}`);
    html = html.replace(from, to);
  }
  return html;
}

/**
 * entryOutputs finds, in an esbuild metafile, the JavaScript bundle built from
 * the entry point entry (a path relative to the working directory, as esbuild
 * writes it) and the stylesheet bundled with it, as paths relative to outdir.
 * @param {{outputs: Object<string, {entryPoint?: string, cssBundle?: string}>}} metafile
 * @param {string} entry
 * @param {string} outdir the output folder as esbuild names it in the metafile
 * @returns {{js: string, css: string}}
 */
export function entryOutputs(metafile, entry, outdir) {
  const rel = (p) => {
    const prefix = outdir.replace(/\/$/, "") + "/";
    if (!p.startsWith(prefix)) throw new Error(`output ${p} is not under ${outdir}`);
    return p.slice(prefix.length);
  };
  for (const [out, meta] of Object.entries(metafile.outputs)) {
    if (meta.entryPoint === entry && out.endsWith(".js")) {
      if (!meta.cssBundle) throw new Error(`entry ${entry} bundled no stylesheet`);
      return { js: rel(out), css: rel(meta.cssBundle) };
    }
  }
  throw new Error(`no JavaScript output for entry ${entry}`);
}
