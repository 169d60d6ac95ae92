import { mergeConfig } from 'vitest/config'
import base from '../../vite.config'

/**
 * The scaled suite (npm run test:scaled, which starts the services and sets REDIS_URL,
 * STORAGE_URL, S3_* and AWS_* first): its own tests plus the API tests whose files go
 * through storage, run here against S3.
 */
const config = mergeConfig(base, {})
// Set, not merged: mergeConfig would append these lists to the main suite's.
config.test!.include = [
  'tests/scaled/**/*.test.ts',
  'tests/api/tus-upload.test.ts',
  'tests/api/ingest.test.ts',
  'tests/api/ingest-reliability.test.ts',
  'tests/api/library-*.test.ts',
  'tests/api/packs-*.test.ts',
]
config.test!.exclude = ['**/node_modules/**']

export default config
