// Nuxt auto-imports only top-level files of shared/utils; nested schema files are re-exported here.
export * from './schemas/auth'
export * from './schemas/listing'
export * from './schemas/team'
export * from './schemas/questionnaire'
export * from './schemas/visit'
export * from './schemas/round'
export * from './schemas/review'
export * from './schemas/csv-import'
