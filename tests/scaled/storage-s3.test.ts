// The storage contract against the S3 gateway that npm run test:scaled starts (Ceph radosgw).
import { randomBytes } from 'node:crypto'
import { parseS3Url, s3Client, S3BlobStore } from '../../server/storage/s3'
import { storageContract } from '../helpers/storage-contract'

const url = process.env.STORAGE_URL
if (!url?.startsWith('s3://')) throw new Error('Run through npm run test:scaled, which starts the S3 gateway')

storageContract('S3 gateway', async () => {
  const where = parseS3Url(url)
  const client = s3Client({ endpoint: process.env.S3_ENDPOINT ?? null, region: process.env.S3_REGION ?? null })
  return new S3BlobStore(client, { ...where, prefix: `${where.prefix}/contract-${randomBytes(4).toString('hex')}` })
})
