import { CopyObjectCommand, DeleteObjectCommand, GetObjectCommand, HeadObjectCommand, PutObjectCommand, S3Client } from '@aws-sdk/client-s3'

// Photos live in an S3 bucket: locally the fake S3 that `npm start`/`npm test` run, in production a real one.
let client: S3Client | undefined

function s3(): S3Client {
  const config = serverConfig()
  client ??= new S3Client({
    endpoint: config.S3_ENDPOINT,
    region: config.S3_REGION,
    forcePathStyle: Boolean(config.S3_ENDPOINT),
    credentials: { accessKeyId: config.S3_ACCESS_KEY_ID, secretAccessKey: config.S3_SECRET_ACCESS_KEY },
    // NOTE: the SDK's default extra checksums are not understood by every S3-compatible server; we verify ourselves.
    requestChecksumCalculation: 'WHEN_REQUIRED',
    responseChecksumValidation: 'WHEN_REQUIRED'
  })
  return client
}

const bucket = () => serverConfig().S3_BUCKET

/**
 * Puts the bytes under a temporary key, checks the stored object's size and MD5 (its ETag), and only then
 * copies it to its final key. An interrupted upload leaves at most a stray temporary object, never a final one.
 */
export async function putVerified(finalKey: string, body: Buffer, contentType: string, md5Hex: string): Promise<void> {
  const temporary = `incoming/${crypto.randomUUID()}`
  await s3().send(new PutObjectCommand({ Bucket: bucket(), Key: temporary, Body: body, ContentType: contentType, ContentLength: body.length }))
  try {
    const head = await s3().send(new HeadObjectCommand({ Bucket: bucket(), Key: temporary }))
    const etag = (head.ETag ?? '').replace(/"/g, '')
    if (head.ContentLength !== body.length || etag !== md5Hex) {
      throw createError({ statusCode: 502, message: 'The photo did not arrive complete in storage. Try again.' })
    }
    await s3().send(new CopyObjectCommand({ Bucket: bucket(), Key: finalKey, CopySource: `${bucket()}/${temporary}`, ContentType: contentType, MetadataDirective: 'REPLACE' }))
  }
  finally {
    await s3().send(new DeleteObjectCommand({ Bucket: bucket(), Key: temporary })).catch(() => undefined)
  }
}

export async function getObject(key: string) {
  return s3().send(new GetObjectCommand({ Bucket: bucket(), Key: key }))
}

/**
 * Deletes objects (erasure, retention), eight at a time. One DeleteObject per key rather than the batch call: the
 * batch call needs a body checksum that not every S3-compatible server accepts. S3 answers success for a key
 * already gone, so a repeated erasure or purge after a crash deletes what is left and nothing fails.
 */
export async function deleteObjects(keys: string[]): Promise<void> {
  const queue = [...keys]
  const worker = async () => {
    for (let key = queue.shift(); key !== undefined; key = queue.shift()) {
      await s3().send(new DeleteObjectCommand({ Bucket: bucket(), Key: key }))
    }
  }
  await Promise.all(Array.from({ length: Math.min(8, queue.length) }, worker))
}
