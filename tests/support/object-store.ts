import { HeadObjectCommand, ListObjectsV2Command, S3Client } from '@aws-sdk/client-s3'

// The bucket the test server writes photos to (the local fake S3 that `npm test` started).
let client: S3Client | undefined

function s3() {
  if (!process.env.S3_ENDPOINT) throw new Error('S3_ENDPOINT is not set: run these tests through `npm test`.')
  client ??= new S3Client({
    endpoint: process.env.S3_ENDPOINT,
    region: 'us-east-1',
    forcePathStyle: true,
    credentials: { accessKeyId: 'S3RVER', secretAccessKey: 'S3RVER' }
  })
  return client
}

const bucket = () => process.env.S3_BUCKET ?? 'furrowcast-photos'

export async function objectSize(key: string): Promise<number | null> {
  try {
    const head = await s3().send(new HeadObjectCommand({ Bucket: bucket(), Key: key }))
    return head.ContentLength ?? null
  }
  catch {
    return null
  }
}

export async function keysUnder(prefix: string): Promise<string[]> {
  const list = await s3().send(new ListObjectsV2Command({ Bucket: bucket(), Prefix: prefix }))
  return (list.Contents ?? []).map(o => o.Key!)
}
