import { DataTypes, type QueryInterface } from 'sequelize'

const id = { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true }
const ref = (model: string, onDelete: 'RESTRICT' | 'CASCADE' = 'RESTRICT') => ({
  type: DataTypes.INTEGER.UNSIGNED,
  allowNull: false,
  references: { model, key: 'id' },
  onDelete
})
const stamps = {
  created_at: { type: DataTypes.DATE, allowNull: false },
  updated_at: { type: DataTypes.DATE, allowNull: false }
}

// Field capture: villages, rounds with versioned questionnaires, assignments, visits made on devices, photos.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.createTable('villages', {
    id,
    organisation_id: ref('organisations'),
    code: { type: DataTypes.STRING(32), allowNull: false },
    name: { type: DataTypes.STRING(120), allowNull: false },
    district: { type: DataTypes.STRING(120), allowNull: false },
    centre_lat: { type: DataTypes.DOUBLE, allowNull: false },
    centre_lon: { type: DataTypes.DOUBLE, allowNull: false },
    boundary: { type: DataTypes.JSON, allowNull: true },
    ...stamps
  })
  await qi.addIndex('villages', ['organisation_id', 'code'], { unique: true })

  await qi.createTable('rounds', {
    id,
    organisation_id: ref('organisations'),
    name: { type: DataTypes.STRING(160), allowNull: false },
    technology: { type: DataTypes.STRING(160), allowNull: false },
    season: { type: DataTypes.STRING(60), allowNull: false },
    status: { type: DataTypes.ENUM('draft', 'open', 'closed'), allowNull: false, defaultValue: 'draft' },
    current_version_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    ...stamps
  })
  await qi.addIndex('rounds', ['organisation_id', 'status'])

  await qi.createTable('questionnaire_versions', {
    id,
    round_id: ref('rounds', 'CASCADE'),
    number: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    definition: { type: DataTypes.JSON, allowNull: false },
    frozen_at: { type: DataTypes.DATE, allowNull: true },
    ...stamps
  })
  await qi.addIndex('questionnaire_versions', ['round_id', 'number'], { unique: true })

  await qi.createTable('round_villages', {
    round_id: { ...ref('rounds', 'CASCADE'), primaryKey: true },
    village_id: { ...ref('villages'), primaryKey: true },
    created_at: { type: DataTypes.DATE, allowNull: false }
  })

  await qi.createTable('assignments', {
    id,
    round_id: ref('rounds', 'CASCADE'),
    village_id: ref('villages'),
    user_id: ref('users'),
    created_at: { type: DataTypes.DATE, allowNull: false }
  })
  await qi.addIndex('assignments', ['round_id', 'village_id', 'user_id'], { unique: true })
  await qi.addIndex('assignments', ['user_id'])

  await qi.createTable('visits', {
    id: { type: DataTypes.CHAR(36), primaryKey: true },
    organisation_id: ref('organisations'),
    round_id: ref('rounds'),
    village_id: ref('villages'),
    enumerator_id: ref('users'),
    questionnaire_version_id: ref('questionnaire_versions'),
    farm_code: { type: DataTypes.STRING(40), allowNull: false },
    lat: { type: DataTypes.DOUBLE, allowNull: true },
    lon: { type: DataTypes.DOUBLE, allowNull: true },
    accuracy_m: { type: DataTypes.DOUBLE, allowNull: true },
    manual_location_reason: { type: DataTypes.STRING(300), allowNull: true },
    answers: { type: DataTypes.JSON, allowNull: false },
    consent_at: { type: DataTypes.DATE(3), allowNull: false },
    started_at: { type: DataTypes.DATE(3), allowNull: false },
    saved_at: { type: DataTypes.DATE(3), allowNull: false },
    adopted: { type: DataTypes.TINYINT, allowNull: false },
    review_state: { type: DataTypes.ENUM('received', 'accepted', 'sent_back'), allowNull: false, defaultValue: 'received' },
    review_reason: { type: DataTypes.STRING(500), allowNull: true },
    flags: { type: DataTypes.JSON, allowNull: false },
    // sha256 of the device's last submission: an identical resend is recognised without comparing fields.
    device_hash: { type: DataTypes.CHAR(64), allowNull: false },
    version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
    ...stamps
  })
  await qi.addIndex('visits', ['round_id', 'farm_code'])
  await qi.addIndex('visits', ['round_id', 'review_state'])
  await qi.addIndex('visits', ['enumerator_id', 'updated_at'])
  await qi.addIndex('visits', ['village_id'])

  await qi.createTable('photos', {
    id: { type: DataTypes.CHAR(36), primaryKey: true },
    visit_id: { type: DataTypes.CHAR(36), allowNull: false, references: { model: 'visits', key: 'id' }, onDelete: 'CASCADE' },
    object_key: { type: DataTypes.STRING(200), allowNull: false },
    size_bytes: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    content_type: { type: DataTypes.STRING(40), allowNull: false },
    sha256: { type: DataTypes.CHAR(64), allowNull: false },
    status: { type: DataTypes.ENUM('pending', 'stored'), allowNull: false, defaultValue: 'pending' },
    ...stamps
  })
  await qi.addIndex('photos', ['visit_id'])
}

export async function down({ context: qi }: { context: QueryInterface }) {
  for (const table of ['photos', 'visits', 'assignments', 'round_villages', 'questionnaire_versions', 'rounds', 'villages']) {
    await qi.dropTable(table)
  }
}
