import { fileURLToPath } from 'node:url';
import { svelte } from '@sveltejs/vite-plugin-svelte';
import { defineConfig } from 'vitest/config';

const at = (p: string) => fileURLToPath(new URL(p, import.meta.url));

/**
 * Two builds of the viewer from viewer/:
 * - the served viewer (default): dist/viewer, which `episcope view` serves;
 * - `--mode clip`: dist/clip/clip.js and clip.css, one ES module with every chunk inlined, which a
 *   clip page carries inline so that it opens from file:// with nothing else.
 */
export default defineConfig(({ mode }) => ({
  root: at('./viewer'),
  base: './',
  plugins: [svelte()],
  worker: { format: 'es' },
  build:
    mode === 'clip'
      ? {
          outDir: at('./dist/clip'),
          emptyOutDir: true,
          target: 'es2022',
          cssCodeSplit: false,
          modulePreload: false,
          chunkSizeWarningLimit: 4096,
          rolldownOptions: {
            input: at('./viewer/clip-main.ts'),
            output: { format: 'es', codeSplitting: false, entryFileNames: 'clip.js', assetFileNames: 'clip[extname]' },
          },
        }
      : {
          outDir: at('./dist/viewer'),
          emptyOutDir: true,
          target: 'es2022',
          chunkSizeWarningLimit: 2048,
        },
  test: {
    root: at('.'),
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 180_000,
    pool: 'forks',
  },
}));
