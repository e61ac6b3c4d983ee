import { createHash, randomUUID } from 'node:crypto'
import { Op, col, where as sqlWhere } from 'sequelize'
import { Photo, Visit } from '../db/models'
import { isErasedVisit } from './erasure'

export const PHOTO_TYPES: Record<string, string> = { 'image/jpeg': 'jpg', 'image/png': 'png', 'image/webp': 'webp' }

interface Actor { id: number, organisationId: number }

/**
 * Stores one photo of a visit the enumerator has already synced. The row is 'pending' while the bytes travel
 * and 'stored' only after the object was verified, so a half upload is never attached to the visit.
 */
export async function storePhoto(actor: Actor, photo: { id: string, visitId: string, contentType: string, sha256: string }, body: Buffer) {
  // Ids are the device's own and are looked up only within the enumerator's visits and that visit's photos
  // (migration 0070), so the answer never depends on another person's rows.
  const visit = await Visit.findOne({ where: { enumeratorId: actor.id, organisationId: actor.organisationId, [Op.and]: [sqlWhere(col('device_key'), photo.visitId)] }, attributes: ['id'] })
  if (!visit) throw createError({ statusCode: 404, message: 'No such visit on the server yet: sync the visit before its photos.' })
  if (await isErasedVisit(visit.id)) throw createError({ statusCode: 410, message: 'This farm\'s personal data was erased at the farmer\'s request: its photos are not taken.' })
  const sha256 = createHash('sha256').update(body).digest('hex')
  if (sha256 !== photo.sha256) throw createError({ statusCode: 400, message: 'The photo arrived damaged (checksum mismatch). Try again.' })
  const existing = await Photo.findOne({ where: { visitId: visit.id, [Op.and]: [sqlWhere(col('device_key'), photo.id)] } })
  if (existing?.status === 'stored' && existing.sha256 === sha256) return { id: photo.id, status: 'duplicate' as const }
  // A device id that some other visit's photo already holds as its server id gets a server id of its own.
  const serverId = existing?.id ?? (await Photo.count({ where: { id: photo.id } }) ? randomUUID() : photo.id)
  const objectKey = `visits/${visit.id}/${serverId}.${PHOTO_TYPES[photo.contentType]}`
  const columns = { objectKey, sizeBytes: body.length, contentType: photo.contentType, sha256 }
  if (existing) await existing.update({ ...columns, status: 'pending' })
  else await Photo.create({ id: serverId, visitId: visit.id, deviceId: serverId === photo.id ? null : photo.id, ...columns, status: 'pending' })
  await putVerified(objectKey, body, photo.contentType, createHash('md5').update(body).digest('hex'))
  await Photo.update({ status: 'stored' }, { where: { id: serverId } })
  return { id: photo.id, status: 'stored' as const }
}

/** A stored photo of a visit of this organisation, or 404 (also for another organisation's photo). */
export async function storedPhotoFor(organisationId: number, id: string) {
  const photo = await Photo.findOne({ where: { id, status: 'stored' } })
  const visit = photo ? await Visit.findOne({ where: { id: photo.visitId, organisationId }, attributes: ['id'] }) : null
  if (!photo || !visit) throw createError({ statusCode: 404, message: 'No such photo.' })
  return photo
}
