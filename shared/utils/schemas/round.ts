import { z } from 'zod'
import { answerCheckSchema } from './checks'
import { groupSchemaOf } from './groups'
import { languagesSchema, translationsSchema } from './languages'
import { questionSchema } from './questionnaire'
import { safeText } from './safe-text'

export const roundCreateSchema = z.object({
  name: safeText(z.string().trim().min(3, 'Give the round a name').max(160)),
  technology: safeText(z.string().trim().min(3, 'Name the technology').max(160)),
  season: safeText(z.string().trim().min(2, 'Name the season').max(60)),
  /** Start from a copy of this earlier round's current questionnaire (the adoption question follows the new technology). */
  copyFromRoundId: z.number().int().positive().nullable().optional()
})
export type RoundCreate = z.infer<typeof roundCreateSchema>

/** A round's status (open a draft, close an open round, reopen a closed one) and/or its target of visits per village. */
export const roundPatchSchema = z.object({
  status: z.enum(['open', 'closed']).optional(),
  targetVisitsPerVillage: z.number({ error: 'Give the target as a whole number' }).int('Give the target as a whole number')
    .min(1, 'The target is at least 1 visit').max(10_000, 'The target is at most 10,000 visits').nullable().optional()
}).refine(b => b.status !== undefined || b.targetVisitsPerVillage !== undefined, 'Send a status or a target')
export type RoundPatch = z.infer<typeof roundPatchSchema>

export const questionnaireSaveSchema = z.object({
  questions: z.array(questionSchema).min(1).max(200),
  checks: z.array(answerCheckSchema).max(50).default([]),
  groups: z.array(groupSchemaOf(questionSchema)).max(10).default([]),
  languages: languagesSchema.optional(),
  translations: translationsSchema.optional()
})
export type QuestionnaireSave = z.infer<typeof questionnaireSaveSchema>

export const roundVillagesSchema = z.object({ villageIds: z.array(z.number().int().positive()).max(2000) })

export const assignmentsSchema = z.object({
  assignments: z.array(z.object({ userId: z.number().int().positive(), villageId: z.number().int().positive() })).max(20_000)
})

/** A boundary is drawn on a map of villages, not surveyed to the metre: more vertices than this are refused. */
export const BOUNDARY_MAX_VERTICES = 5000
const tooManyVertices = `A boundary may have at most ${BOUNDARY_MAX_VERTICES} vertices; simplify it first`
// Longitude, latitude and at most an altitude: extra numbers in a position are refused, not stored.
const position = z.tuple([z.number().min(-180).max(180), z.number().min(-90).max(90), z.number().optional()])
const ring = z.array(position).min(4, 'A ring needs at least 4 positions').max(BOUNDARY_MAX_VERTICES, tooManyVertices).refine(
  r => r[0]![0] === r.at(-1)![0] && r[0]![1] === r.at(-1)![1], 'A ring must end where it starts')
const polygon = z.object({ type: z.literal('Polygon'), coordinates: z.array(ring).min(1) })
const multiPolygon = z.object({ type: z.literal('MultiPolygon'), coordinates: z.array(z.array(ring).min(1)).min(1) })
const geometry = z.discriminatedUnion('type', [polygon, multiPolygon], { error: 'The boundary must be a GeoJSON Polygon or MultiPolygon' })
  .refine(g => (g.type === 'Polygon' ? g.coordinates.flat() : g.coordinates.flat(2)).length <= BOUNDARY_MAX_VERTICES, tooManyVertices)

/** A village boundary: a GeoJSON geometry, Feature or one-feature FeatureCollection, reduced to its geometry. */
// Built under a local name: a top-level `export const x = z.fn(…, [` confuses the auto-import scanner.
const boundaryForms = z.union([
  geometry,
  z.object({ type: z.literal('Feature'), geometry }).transform(f => f.geometry),
  z.object({ type: z.literal('FeatureCollection'), features: z.array(z.object({ type: z.literal('Feature'), geometry })).length(1, 'Upload one village boundary at a time') })
    .transform(c => c.features[0]!.geometry)
], { error: 'The boundary must be a GeoJSON Polygon or MultiPolygon (or a Feature holding one)' })
export const boundarySchema = boundaryForms

export const villageCreateSchema = z.object({
  code: z.string().trim().regex(/^[A-Za-z0-9-]{2,32}$/, 'Use 2–32 letters, digits or -'),
  name: safeText(z.string().trim().min(2).max(120)),
  district: safeText(z.string().trim().min(2).max(120)),
  centreLat: z.number().min(-90).max(90),
  centreLon: z.number().min(-180).max(180),
  boundary: boundarySchema.nullable().optional()
})
export type VillageCreate = z.infer<typeof villageCreateSchema>
