import fs from 'node:fs'
import { Readable } from 'node:stream'
import {
  DeleteObjectCommand,
  DeleteObjectsCommand,
  GetObjectCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  S3Client,
  type S3ClientConfig,
} from '@aws-sdk/client-s3'
import { Upload } from '@aws-sdk/lib-storage'
import { getSignedUrl } from '@aws-sdk/s3-request-presigner'
import { BlobMissingError, checkKey, type BlobStore, type ByteRange } from './storage'

export interface S3Location {
  bucket: string
  /** Key prefix inside the bucket, without leading or trailing "/" ('' for none). */
  prefix: string
}

/** Parses STORAGE_URL=s3://bucket/prefix. */
export function parseS3Url(url: string): S3Location {
  const u = new URL(url)
  if (u.protocol !== 's3:' || !u.hostname) throw new Error(`STORAGE_URL must look like s3://bucket/prefix, not ${url}`)
  return { bucket: u.hostname, prefix: decodeURIComponent(u.pathname).replace(/^\/+|\/+$/g, '') }
}

/**
 * The S3 client for STORAGE_URL, S3_ENDPOINT and S3_REGION; credentials come from the SDK's own
 * chain (AWS_ACCESS_KEY_ID / AWS_SECRET_ACCESS_KEY …). With an endpoint of our own (a Ceph
 * gateway, a local MinIO-like service), buckets are addressed by path: such endpoints seldom
 * have a DNS name per bucket.
 */
/**
 * Checksums only where S3 requires them: the SDK's default since 3.729 adds CRC trailers to
 * streamed bodies (aws-chunked), which S3-compatible gateways such as Ceph's radosgw do not all
 * accept on a stream of unknown length; TLS and the SHA-256 checks of ingest already guard the bytes.
 */
export const S3_COMPAT = {
  requestChecksumCalculation: 'WHEN_REQUIRED',
  responseChecksumValidation: 'WHEN_REQUIRED',
} as const satisfies S3ClientConfig

export function s3Client(opts: { endpoint: string | null; region: string | null }): S3Client {
  const config: S3ClientConfig = { region: opts.region || 'us-east-1', ...S3_COMPAT }
  if (opts.endpoint) Object.assign(config, { endpoint: opts.endpoint, forcePathStyle: true })
  return new S3Client(config)
}

const missing = (err: unknown) => {
  const e = err as { name?: string; $metadata?: { httpStatusCode?: number } }
  return e?.name === 'NoSuchKey' || e?.name === 'NotFound' || e?.$metadata?.httpStatusCode === 404
}

export class S3BlobStore implements BlobStore {
  readonly kind = 's3'
  constructor(
    readonly client: S3Client,
    readonly where: S3Location,
  ) {}

  private key(key: string): string {
    const k = checkKey(key)
    return this.where.prefix ? `${this.where.prefix}/${k}` : k
  }

  async putFile(key: string, file: string): Promise<void> {
    // lib-storage sends large files as a multipart upload, a few parts in flight at a time,
    // streamed from the disk; a failed multipart upload is aborted so no parts linger.
    const upload = new Upload({
      client: this.client,
      params: { Bucket: this.where.bucket, Key: this.key(key), Body: fs.createReadStream(file) },
      queueSize: 2,
      partSize: 16 * 2 ** 20,
      leavePartsOnError: false,
    })
    await upload.done()
  }

  async read(key: string, range?: ByteRange): Promise<Readable> {
    try {
      const out = await this.client.send(
        new GetObjectCommand({
          Bucket: this.where.bucket,
          Key: this.key(key),
          Range: range ? `bytes=${range.start}-${range.end}` : undefined,
        }),
      )
      return out.Body as Readable
    } catch (err) {
      if (missing(err)) throw new BlobMissingError(key)
      throw err
    }
  }

  async size(key: string): Promise<number | null> {
    try {
      const head = await this.client.send(new HeadObjectCommand({ Bucket: this.where.bucket, Key: this.key(key) }))
      return head.ContentLength ?? 0
    } catch (err) {
      if (missing(err)) return null
      throw err
    }
  }

  async remove(key: string): Promise<void> {
    await this.client.send(new DeleteObjectCommand({ Bucket: this.where.bucket, Key: this.key(key) }))
  }

  async list(prefix: string): Promise<string[]> {
    const full = this.key(prefix.replace(/\/$/, '')) + '/'
    const strip = this.where.prefix ? this.where.prefix.length + 1 : 0
    const keys: string[] = []
    let token: string | undefined
    do {
      const page = await this.client.send(
        new ListObjectsV2Command({ Bucket: this.where.bucket, Prefix: full, ContinuationToken: token }),
      )
      for (const o of page.Contents ?? []) if (o.Key) keys.push(o.Key.slice(strip))
      token = page.IsTruncated ? page.NextContinuationToken : undefined
    } while (token)
    return keys.sort()
  }

  async removePrefix(prefix: string): Promise<void> {
    const keys = await this.list(prefix)
    for (let i = 0; i < keys.length; i += 1000) {
      await this.client.send(
        new DeleteObjectsCommand({
          Bucket: this.where.bucket,
          Delete: { Objects: keys.slice(i, i + 1000).map((k) => ({ Key: this.key(k) })), Quiet: true },
        }),
      )
    }
  }

  async presign(key: string, opts: { expiresSeconds: number; downloadName?: string }): Promise<string | null> {
    const disposition = opts.downloadName
      ? `attachment; filename*=UTF-8''${encodeURIComponent(opts.downloadName)}`
      : undefined
    return getSignedUrl(
      this.client,
      new GetObjectCommand({ Bucket: this.where.bucket, Key: this.key(key), ResponseContentDisposition: disposition }),
      { expiresIn: opts.expiresSeconds },
    )
  }
}
