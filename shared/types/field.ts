import type { MultiPolygon, Polygon } from 'geojson'
import type { QuestionnaireVersionDto } from '../utils/schemas/questionnaire'
import type { ServerVisit } from '../utils/schemas/visit'
import type { FieldSampleList } from './sample'

export interface FieldVillage {
  id: number
  code: string
  name: string
  district: string
  centreLat: number
  centreLon: number
  /** The uploaded outline (GeoJSON Polygon or MultiPolygon), for the tablet's position picker. Absent in setups cached before it was sent. */
  boundary?: Polygon | MultiPolygon | null
}

export interface FieldRound {
  id: number
  /** A closed round stays on the tablet so its drafts and sent-back visits can still be read; nothing new is recorded. Absent in setups cached before closing existed: read as open. */
  status?: 'open' | 'closed'
  name: string
  technology: string
  season: string
  currentVersionId: number
  villageIds: number[]
}

/** GET /api/field/setup: everything the tablet caches to record visits with no network. */
export interface FieldSetup {
  rounds: FieldRound[]
  villages: FieldVillage[]
  questionnaires: QuestionnaireVersionDto[]
  /** The sample lists of the enumerator's own villages (absent in setups cached before lists existed). */
  samples?: FieldSampleList[]
  fetchedAt: string
}

/** GET /api/sync/visits */
export interface VisitStates {
  visits: ServerVisit[]
  /** Visits whose personal data was erased at the farmer's request: the tablet deletes its copy and photos. */
  erased: string[]
  at: string
}

export interface RoundRow {
  id: number
  name: string
  technology: string
  season: string
  status: 'draft' | 'open' | 'closed'
  villageCount: number
  visitCount: number
  versionNumber: number | null
}

export interface VillageRow extends FieldVillage {
  hasBoundary: boolean
}

/** Visits of one village of a round, by review state (the round's progress). */
export interface VillageProgress {
  villageId: number
  received: number
  accepted: number
  sentBack: number
}

export interface RoundDetail extends RoundRow {
  /** Visits wanted per village (null: none set). */
  targetVisitsPerVillage: number | null
  progress: VillageProgress[]
  questionnaire: QuestionnaireVersionDto | null
  /** Every saved version, oldest first: a visit is shown and corrected with the version it was answered with. */
  questionnaires: QuestionnaireVersionDto[]
  villages: VillageRow[]
  assignments: Array<{ userId: number, villageId: number }>
  enumerators: Array<{ id: number, name: string }>
}

export interface ReviewRow {
  id: string
  roundId: number
  villageId: number
  villageName: string
  enumeratorId: number
  enumeratorName: string
  farmCode: string
  savedAt: string
  reviewState: 'received' | 'accepted' | 'sent_back'
  reviewReason: string | null
  flags: Record<string, unknown>
  answers: Record<string, unknown>
  /** Questions the visit's conditions hid (stored as not asked, unlike an answer left empty). */
  notAsked: string[]
  questionnaireVersionId: number
  lat: number | null
  lon: number | null
  accuracyM: number | null
  manualLocationReason: string | null
  version: number
  photoIds: string[]
  /** Every correction made in review, oldest first: who, when, why, and each changed answer's old and new value. */
  corrections: VisitCorrection[]
}

export interface VisitCorrection {
  at: string
  by: string
  reason: string
  changes: Array<{ key: string, before: unknown, after: unknown }>
}
