import { afterAll, describe, expect, it } from 'vitest'
import { type PoolManager, type RawConnection, eachRow } from '../../server/utils/row-stream'
import { closeTestDatabase, testDatabase } from '../support/database'

afterAll(closeTestDatabase)

async function withConnection(use: (conn: RawConnection) => Promise<void>) {
  const manager = testDatabase().connectionManager as unknown as PoolManager
  const conn = await manager.getConnection({ type: 'read' })
  try {
    await use(conn)
  }
  finally {
    await manager.releaseConnection(conn)
  }
}

describe('eachRow (the model loader\'s row stream, on MariaDB)', () => {
  it('hands over every row, in order, once', async () => {
    await withConnection(async (conn) => {
      const seen: number[] = []
      await eachRow(conn.queryStream({ sql: 'SELECT seq FROM seq_1_to_30000', rowsAsArray: true }), row => seen.push(Number(row[0])))
      expect(seen.length).toBe(30000)
      expect(seen.every((v, i) => v === i + 1)).toBe(true)
    })
  })

  it('ends the read on a refused row with that error, and the connection answers the next query', async () => {
    await withConnection(async (conn) => {
      let taken = 0
      const refusal = new Error('row 100 refused')
      await expect(eachRow(conn.queryStream({ sql: 'SELECT seq FROM seq_1_to_50000', rowsAsArray: true }), () => {
        if (++taken === 100) throw refusal
      })).rejects.toBe(refusal)
      // Nothing after the refused row reached `take`; the rest was drained, so the protocol is in step.
      expect(taken).toBe(100)
      expect(await conn.query('SELECT 41 + 1 AS answer')).toEqual([{ answer: 42 }])
    })
  })

  it('passes on an error of the query itself', async () => {
    await withConnection(async (conn) => {
      await expect(eachRow(conn.queryStream({ sql: 'SELECT nothing FROM no_such_table', rowsAsArray: true }), () => {})).rejects.toThrow(/no_such_table/)
      expect(await conn.query('SELECT 1 AS one')).toEqual([{ one: 1 }])
    })
  })
})
