import { QueryTypes } from 'sequelize'
import { database } from '../db/connection'

export default definePublicHandler(async () => {
  await database().query('SELECT 1 AS up', { type: QueryTypes.SELECT })
  return { ok: true }
})
