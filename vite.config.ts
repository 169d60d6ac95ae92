import { fileURLToPath, URL } from 'node:url'
import { configDefaults, defineConfig } from 'vitest/config'
import vue from '@vitejs/plugin-vue'

const alias = {
  '@': fileURLToPath(new URL('./src', import.meta.url)),
  '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
}

const timed = process.env.STRAYFIELD_TIMED === '1'

export default defineConfig({
  plugins: [vue()],
  resolve: { alias },
  build: { outDir: 'dist', chunkSizeWarningLimit: 1500 },
  server: {
    port: 5173,
    proxy: { '/api': `http://localhost:${process.env.PORT ?? 5170}` },
  },
  test: {
    // Tests whose pass depends on how fast the server answers (limits an issue
    // defines: an upload under 2 s, /api/health under 200 ms) live in tests/timed/
    // and run on their own after the rest (STRAYFIELD_TIMED=1, one file at a time),
    // so the suite's own parallel load does not decide them.
    include: timed ? ['tests/timed/**/*.test.ts'] : ['tests/**/*.test.ts', 'src/**/*.test.ts', 'server/**/*.test.ts'],
    // tests/scaled/ needs the services `npm run test:scaled` starts (REDIS_URL): left out without them.
    exclude: timed
      ? configDefaults.exclude
      : [...configDefaults.exclude, 'tests/timed/**', ...(process.env.REDIS_URL ? [] : ['tests/scaled/**'])],
    environment: 'node',
    testTimeout: 60_000,
    hookTimeout: 120_000,
    pool: 'forks',
    fileParallelism: !timed,
    maxWorkers: 2,
  },
})
