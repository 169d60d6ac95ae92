// The storage contract against the local folder (tests/scaled/storage-s3.test.ts runs it against S3).
import { LocalBlobStore } from '../../server/storage/local'
import { storageContract } from '../helpers/storage-contract'

storageContract('local folder', async (dir) => new LocalBlobStore(dir))
