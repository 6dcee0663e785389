import { build, type Plugin } from 'esbuild';
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * The schema library ships messages in some forty languages behind one index module; the dashboard shows API
 * messages in English only, so the index is replaced by the English locale alone (about 300 kB less to load).
 */
const englishOnlyLocales: Plugin = {
  name: 'english-only-locales',
  setup(b) {
    b.onLoad({ filter: /[\\/]zod[\\/]v4[\\/]locales[\\/]index\.js$/ }, (args) => ({
      contents: "export { default as en } from './en.js';\n",
      resolveDir: dirname(args.path),
      loader: 'js',
    }));
  },
};

/**
 * Bundle the dashboard into dist/: index.html, assets/app.js (one ES module, minified, with a source map) and
 * assets/app.css. Everything is local; the page loads nothing from elsewhere.
 */
export async function buildDashboard(outDir = join(dirname(fileURLToPath(import.meta.url)), 'dist')): Promise<string> {
  const here = dirname(fileURLToPath(import.meta.url));
  await rm(outDir, { recursive: true, force: true });
  await mkdir(join(outDir, 'assets'), { recursive: true });
  await build({
    entryPoints: { app: join(here, 'src/main.ts'), 'app-style': join(here, 'src/styles.css') },
    outdir: join(outDir, 'assets'),
    entryNames: '[name]',
    bundle: true,
    format: 'esm',
    platform: 'browser',
    target: ['chrome110', 'firefox110', 'safari16'],
    minify: true,
    sourcemap: true,
    legalComments: 'none',
    logLevel: 'warning',
    plugins: [englishOnlyLocales],
  });
  const html = `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Plumbline</title>
<link rel="icon" href="data:,">
<link rel="stylesheet" href="/assets/app-style.css">
<script type="module" src="/assets/app.js"></script>
</head>
<body></body>
</html>
`;
  await writeFile(join(outDir, 'index.html'), html);
  return outDir;
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const out = await buildDashboard();
  console.log(`dashboard built into ${out}`);
}
