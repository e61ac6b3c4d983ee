import { createHash, randomUUID } from 'node:crypto'
import type { H3Event } from 'h3'
import { QueryTypes } from 'sequelize'
import {
  IMPORT_MAX_BYTES, IMPORT_PREVIEW_ROWS, IMPORT_REPORT_MAX,
  type ImportOutcome, type ImportPreview, type ImportProblem, type ImportRequest, importRequestSchema
} from '#shared/utils/schemas/csv-import'
import type { AnswerCheck } from '#shared/utils/schemas/checks'
import { type Question, questionnaireDefinitionSchema } from '#shared/utils/schemas/questionnaire'
import { adoptedOf, notAskedKeys } from '#shared/utils/schemas/visit'
import { fieldErrorsOf, summaryOf } from '#shared/utils/zod-errors'
import { type CheckedRow, CsvFileError, type ParsedCsv, checkRows, mappingErrors, parseCsv, rejectedRowsCsv } from '#shared/utils/imports/csv-rows'
import { ImportBatch, QuestionnaireVersion, RoundVillage, User, Village, Visit, type VisitFlags } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'
import { linkVisitsToFarms } from './farm-register'
import { edgeValues } from './visit-flags'

const TOO_LARGE = `The file is larger than the ${IMPORT_MAX_BYTES / 1024 / 1024} MB limit for an import. Split it into smaller files and import them one by one.`

/**
 * Reads the JSON body of an import. Its size limit is enforced while it streams by the request-body
 * middleware (the rule for the import routes in request-rules.ts); bytes that are not UTF-8 are refused.
 */
export async function readImportRequest(event: H3Event): Promise<ImportRequest> {
  const raw = await readRawBody(event, false)
  let text: string
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(raw ?? new Uint8Array())
  }
  catch {
    throw createError({ statusCode: 400, message: 'The file is not in UTF-8. Save it again with the UTF-8 encoding and choose it again.' })
  }
  let body: unknown = {}
  if (text.trim()) {
    try {
      body = JSON.parse(text)
    }
    catch {
      throw createError({ statusCode: 400, message: 'The request is not valid JSON.' })
    }
  }
  const parsed = importRequestSchema.safeParse(body)
  if (!parsed.success) {
    const fieldErrors = fieldErrorsOf(parsed.error)
    throw createError({ statusCode: 400, statusMessage: 'Validation Error', message: summaryOf(fieldErrors), data: { fieldErrors } })
  }
  const request = parsed.data
  if (Buffer.byteLength(request.csv, 'utf8') > IMPORT_MAX_BYTES) throw createError({ statusCode: 413, message: TOO_LARGE })
  return request
}

interface ImportContext {
  roundId: number
  versionId: number
  questions: Question[]
  checks: AnswerCheck[]
  villages: Map<string, Village>
}

async function contextFor(user: SignedInUser, roundId: number): Promise<ImportContext> {
  const round = await findRound(user.organisationId, roundId)
  if (round.status === 'draft') {
    throw createError({ statusCode: 409, message: 'Open the round before importing: opening freezes the questionnaire the rows are checked against.' })
  }
  const version = await QuestionnaireVersion.findByPk(round.currentVersionId!)
  // One CSV line is one farm: it cannot hold a farm's several plots. A questionnaire that requires rows is refused
  // plainly; one whose groups may stay empty imports its visits without rows.
  const required = version!.definition.groups?.find(g => (g.minRows ?? 0) > 0)
  if (required) throw createError({ statusCode: 409, message: `This questionnaire asks for at least ${required.minRows} ${required.minRows === 1 ? 'row' : 'rows'} of "${required.label}" per farm, and a CSV file (one line per farm) cannot hold them: import is not available for this round. Record these visits on a tablet instead.` })
  const links = await RoundVillage.findAll({ where: { roundId } })
  const villages = await Village.findAll({ where: { id: links.map(l => l.villageId), organisationId: user.organisationId }, order: [['code', 'ASC']] })
  if (!villages.length) throw createError({ statusCode: 409, message: 'This round has no villages yet. Add its villages before importing.' })
  return {
    roundId,
    versionId: version!.id,
    ...(({ questions, checks }) => ({ questions, checks: checks ?? [] }))(questionnaireDefinitionSchema.parse(version!.definition)),
    villages: new Map(villages.map(v => [v.code, v]))
  }
}

function parseOr400(csv: string): ParsedCsv {
  try {
    return parseCsv(csv)
  }
  catch (error) {
    if (error instanceof CsvFileError) throw createError({ statusCode: 400, message: error.message })
    throw error
  }
}

async function checkRequest(user: SignedInUser, roundId: number, request: ImportRequest) {
  const ctx = await contextFor(user, roundId)
  const parsed = parseOr400(request.csv)
  const errors = mappingErrors(request, parsed.columns, ctx.questions)
  if (errors.length) throw createError({ statusCode: 400, message: errors.join(' ') })
  const checked = checkRows(parsed, ctx.questions, request, [...ctx.villages.keys()], undefined, ctx.checks)
  return { ctx, parsed, ...checked }
}

function reportOf(rows: readonly CheckedRow[]): { report: ImportProblem[], reportTruncated: boolean } {
  const all = rows.flatMap(r => r.problems)
  return { report: all.slice(0, IMPORT_REPORT_MAX), reportTruncated: all.length > IMPORT_REPORT_MAX }
}

/** Columns found, the first rows as mapped and every row's problems. Writes nothing. */
export async function previewImport(user: SignedInUser, roundId: number, request: ImportRequest): Promise<ImportPreview> {
  const { parsed, rows, mappingProblems } = await checkRequest(user, roundId, request)
  const rejected = rows.filter(r => r.problems.length).length
  return {
    columns: parsed.columns,
    delimiter: parsed.delimiter,
    rowCount: rows.length,
    validCount: mappingProblems.length ? 0 : rows.length - rejected,
    rejectedCount: mappingProblems.length ? rows.length : rejected,
    rows: rows.slice(0, IMPORT_PREVIEW_ROWS).map(r => ({ row: r.row, farmCode: r.farmCode, villageCode: r.villageCode, visitDate: r.visitDate, answers: r.answers, valid: !r.problems.length })),
    mappingProblems,
    ...reportOf(rows)
  }
}

/**
 * Imports the rows of a CSV file as accepted visits of the round, in one transaction. all-or-nothing
 * writes nothing unless every row passes (422 with the report); valid-only writes the valid rows and
 * returns the rejected ones. The same file (by the sha256 of its text) is refused a second time (409).
 */
export async function importRows(event: H3Event, user: SignedInUser, roundId: number, request: ImportRequest): Promise<ImportOutcome> {
  const { ctx, parsed, rows, mappingProblems } = await checkRequest(user, roundId, request)
  if (mappingProblems.length) throw createError({ statusCode: 400, message: mappingProblems.join(' ') })
  const fileSha256 = createHash('sha256').update(request.csv).digest('hex')
  await refuseRepeat(roundId, fileSha256)
  const valid = rows.filter(r => !r.problems.length)
  const rejectedCount = rows.length - valid.length
  const outcome = { rowCount: rows.length, rejectedCount, ...reportOf(rows), rejectedCsv: rejectedRowsCsv(parsed.columns, rows, ctx.questions) }
  if (request.mode === 'all-or-nothing' && rejectedCount) {
    setResponseStatus(event, 422)
    return { ...outcome, importedCount: 0, message: `Nothing was imported: ${rejectedCount} of ${rows.length} rows have problems. Correct them, or import the valid rows only.` }
  }
  if (!valid.length) {
    setResponseStatus(event, 422)
    return { ...outcome, importedCount: 0, message: `Nothing was imported: none of the ${rows.length} rows passed the checks.` }
  }
  let importId: number
  let toReview = 0
  try {
    importId = await database().transaction(async (transaction) => {
      const batch = await ImportBatch.create({
        organisationId: user.organisationId,
        roundId,
        questionnaireVersionId: ctx.versionId,
        importedBy: user.id,
        fileName: request.fileName || 'upload.csv',
        fileSha256,
        mode: request.mode,
        rowsTotal: rows.length,
        rowsImported: valid.length,
        rowsRejected: rejectedCount
      }, { transaction })
      const earlier = await Visit.findAll({ where: { roundId, farmCode: [...new Set(valid.map(r => r.farmCode))] }, attributes: ['id', 'farmCode'], transaction })
      const onServer = new Set(earlier.map(v => v.farmCode.toLowerCase()))
      const inFile = new Map<string, number>()
      for (const r of valid) inFile.set(r.farmCode.toLowerCase(), (inFile.get(r.farmCode.toLowerCase()) ?? 0) + 1)
      const now = new Date()
      const visits = valid.map((r) => {
        const key = r.farmCode.toLowerCase()
        const flags: VisitFlags = {}
        const edges = edgeValues(ctx.questions, r.answers)
        if (edges.length) flags.edgeValues = edges
        if (onServer.has(key) || (inFile.get(key) ?? 0) > 1) flags.duplicateFarmCode = true
        // The day of the visit when the file gives one (noon UTC, so it reads as the same day everywhere).
        const at = r.visitDate ? new Date(`${r.visitDate}T12:00:00Z`) : now
        return {
          id: randomUUID(),
          organisationId: user.organisationId,
          roundId,
          villageId: ctx.villages.get(r.villageCode)!.id,
          enumeratorId: user.id,
          questionnaireVersionId: ctx.versionId,
          farmCode: r.farmCode,
          lat: null,
          lon: null,
          accuracyM: null,
          manualLocationReason: 'imported',
          answers: r.answers,
          notAsked: notAskedOrNull(ctx.questions, r.answers),
          consentAt: at,
          startedAt: at,
          savedAt: at,
          adopted: adoptedOf(r.answers),
          // Past survey data were reviewed where they were collected: they count as accepted at once, except a farm
          // code seen twice (in the file or already in the round), which waits in review with its flag.
          reviewState: flags.duplicateFarmCode ? 'received' as const : 'accepted' as const,
          reviewReason: null,
          flags,
          deviceHash: createHash('sha256').update(`${fileSha256}:${r.row}`).digest('hex'),
          source: 'import' as const,
          importId: batch.id
        }
      })
      toReview = visits.filter(v => v.reviewState === 'received').length
      for (let i = 0; i < visits.length; i += 1000) await Visit.bulkCreate(visits.slice(i, i + 1000), { transaction })
      await bumpDataVersion(roundId, transaction)
      // A farm code registered in another village waits in review too (farm-register.ts says why).
      const unlinked = new Set(await linkVisitsToFarms({ organisationId: user.organisationId, roundIds: [roundId], farmCodes: visits.map(v => v.farmCode) }, transaction))
      const otherVillage = visits.filter(v => v.reviewState === 'accepted' && unlinked.has(v.id)).map(v => v.id)
      if (otherVillage.length) {
        await database().query('UPDATE visits SET review_state = \'received\' WHERE id IN (?)', { replacements: [otherVillage], transaction, type: QueryTypes.UPDATE })
        toReview += otherVillage.length
      }
      const clashing = earlier.filter(v => inFile.has(v.farmCode.toLowerCase())).map(v => v.id)
      if (clashing.length) {
        await database().query('UPDATE visits SET flags = JSON_SET(flags, \'$.duplicateFarmCode\', true) WHERE id IN (?)', { replacements: [clashing], transaction, type: QueryTypes.UPDATE })
      }
      await audit(event, user, {
        action: 'visits.import',
        entityType: 'round',
        entityId: roundId,
        details: { importId: batch.id, fileName: batch.fileName, mode: request.mode, rows: rows.length, imported: valid.length, rejected: rejectedCount }
      }, transaction)
      return batch.id
    })
  }
  catch (error) {
    if ((error as { name?: string }).name === 'SequelizeUniqueConstraintError') await refuseRepeat(roundId, fileSha256)
    throw error
  }
  const review = toReview
    ? ` ${toReview} of them use a farm code seen twice (in the file or already in the round) or registered in another village, and wait in review, flagged.`
    : ''
  const message = (rejectedCount
    ? `Imported ${valid.length} of ${rows.length} rows; ${rejectedCount} rejected (download them with the reasons).`
    : `Imported all ${valid.length} rows.`) + review
  return { ...outcome, importId, importedCount: valid.length, message }
}

async function refuseRepeat(roundId: number, fileSha256: string) {
  const before = await ImportBatch.findOne({ where: { roundId, fileSha256 } })
  if (!before) return
  const who = await User.findByPk(before.importedBy, { attributes: ['name'] })
  throw createError({
    statusCode: 409,
    message: `This file was imported into this round already (${before.fileName}, ${before.createdAt.toISOString().slice(0, 10)}, by ${who?.name ?? 'a coordinator'}: ${before.rowsImported} rows). Importing it again would count the same farms twice.`
  })
}

/** What the questionnaire's conditions left not asked in an imported row (null when nothing). */
function notAskedOrNull(questions: Parameters<typeof notAskedKeys>[0], answers: Record<string, unknown>): string[] | null {
  const keys = notAskedKeys(questions, answers)
  return keys.length ? keys : null
}
