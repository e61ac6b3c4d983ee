import { createHash } from 'node:crypto'
import { Photo, Visit } from '../db/models'
import { isErasedVisit } from './erasure'

export const PHOTO_TYPES: Record<string, string> = { 'image/jpeg': 'jpg', 'image/png': 'png', 'image/webp': 'webp' }

interface Actor { id: number, organisationId: number }

/**
 * Stores one photo of a visit the enumerator has already synced. The row is 'pending' while the bytes travel
 * and 'stored' only after the object was verified, so a half upload is never attached to the visit.
 */
export async function storePhoto(actor: Actor, photo: { id: string, visitId: string, contentType: string, sha256: string }, body: Buffer) {
  const visit = await Visit.findOne({ where: { id: photo.visitId, enumeratorId: actor.id, organisationId: actor.organisationId }, attributes: ['id'] })
  if (!visit) throw createError({ statusCode: 404, message: 'No such visit on the server yet: sync the visit before its photos.' })
  if (await isErasedVisit(visit.id)) throw createError({ statusCode: 410, message: 'This farm\'s personal data was erased at the farmer\'s request: its photos are not taken.' })
  const sha256 = createHash('sha256').update(body).digest('hex')
  if (sha256 !== photo.sha256) throw createError({ statusCode: 400, message: 'The photo arrived damaged (checksum mismatch). Try again.' })
  const existing = await Photo.findByPk(photo.id)
  if (existing && existing.visitId !== photo.visitId) throw createError({ statusCode: 409, message: 'This photo id belongs to another visit.' })
  if (existing?.status === 'stored' && existing.sha256 === sha256) return { id: photo.id, status: 'duplicate' as const }
  const objectKey = `visits/${photo.visitId}/${photo.id}.${PHOTO_TYPES[photo.contentType]}`
  const columns = { objectKey, sizeBytes: body.length, contentType: photo.contentType, sha256 }
  if (existing) await existing.update({ ...columns, status: 'pending' })
  else await Photo.create({ id: photo.id, visitId: photo.visitId, ...columns, status: 'pending' })
  await putVerified(objectKey, body, photo.contentType, createHash('md5').update(body).digest('hex'))
  await Photo.update({ status: 'stored' }, { where: { id: photo.id } })
  return { id: photo.id, status: 'stored' as const }
}

/** A stored photo of a visit of this organisation, or 404 (also for another organisation's photo). */
export async function storedPhotoFor(organisationId: number, id: string) {
  const photo = await Photo.findOne({ where: { id, status: 'stored' } })
  const visit = photo ? await Visit.findOne({ where: { id: photo.visitId, organisationId }, attributes: ['id'] }) : null
  if (!photo || !visit) throw createError({ statusCode: 404, message: 'No such photo.' })
  return photo
}
