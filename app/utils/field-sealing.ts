import type { DBCore, DBCoreCursor, DBCoreMutateRequest, DBCoreTable, DBCoreTransaction, Middleware } from 'dexie'
import { seal, unseal } from './field-crypto'

// One layer under every Dexie table of the field store: each record is stored as its few index fields in clear
// (ids, states, round and village numbers, timestamps: what queries need, never a farm code, name or answer)
// plus the whole record sealed with the data key. New fields of a visit, a photo or the cached round setup are
// covered without anyone thinking of it. Records from before encryption (no sealed part) are read as they are and
// sealed on the first unlock (field-vault.ts).
//
// WebCrypto is asynchronous, and IndexedDB commits a transaction as soon as it has no request pending at the end
// of a task. While a record is sealed or opened, `whileAlive` keeps the transaction busy with cheap reads and hands
// the result back from inside a request's success callback, where the transaction is still active (the same trick
// as Dexie.waitFor).

export const SEALED = 'sealed'

export class FieldLockedError extends Error {
  constructor() {
    super('The tablet is locked: enter your PIN to open its visits.')
    this.name = 'FieldLockedError'
  }
}

interface SealedRecord { [SEALED]: Uint8Array, [field: string]: unknown }

const isSealed = (value: unknown): value is SealedRecord => Boolean(value && typeof value === 'object' && (value as SealedRecord)[SEALED] instanceof Uint8Array)

function whileAlive<T>(trans: DBCoreTransaction, storeName: string, work: Promise<T>): Promise<T> {
  const idb = trans as unknown as IDBTransaction
  return new Promise<T>((resolve, reject) => {
    let outcome: { ok: true, value: T } | { ok: false, error: unknown } | null = null
    work.then(value => outcome = { ok: true, value }, error => outcome = { ok: false, error })
    const spin = () => {
      if (outcome) {
        if (outcome.ok) resolve(outcome.value)
        else reject(outcome.error)
        return
      }
      const request = idb.objectStore(storeName).get(-Infinity)
      request.onsuccess = spin
      request.onerror = () => reject(request.error)
    }
    spin()
  })
}

function keyPathsOf(table: DBCoreTable): string[] {
  const paths = [table.schema.primaryKey, ...table.schema.indexes].flatMap(index => index.keyPath ?? [])
  return [...new Set(paths.flat())]
}

function clearPart(value: Record<string, unknown>, paths: string[]): Record<string, unknown> {
  const out: Record<string, unknown> = {}
  for (const path of paths) if (path in value) out[path] = value[path]
  return out
}

export function sealingMiddleware(keyOf: () => CryptoKey | null): Middleware<DBCore> {
  return {
    stack: 'dbcore',
    name: 'furrowcast-sealing',
    create(down) {
      return {
        ...down,
        table(name) {
          const table = down.table(name)
          const paths = keyPathsOf(table)
          const key = () => {
            const k = keyOf()
            if (!k) throw new FieldLockedError()
            return k
          }
          const sealOne = async (k: CryptoKey, value: Record<string, unknown>) => ({ ...clearPart(value, paths), [SEALED]: await seal(k, value) })
          const openOne = async (value: unknown) => isSealed(value) ? unseal(key(), value[SEALED]) : value
          const openMany = (trans: DBCoreTransaction, values: readonly unknown[]) =>
            values.some(isSealed) ? whileAlive(trans, name, Promise.all(values.map(openOne))) : Promise.resolve(values as unknown[])

          return {
            ...table,
            async mutate(req: DBCoreMutateRequest) {
              if (req.type !== 'add' && req.type !== 'put') return table.mutate(req)
              const k = key()
              const values = await whileAlive(req.trans, name, Promise.all(req.values.map(v => sealOne(k, v as Record<string, unknown>))))
              return table.mutate({ ...req, values })
            },
            async get(req) {
              const value: unknown = await table.get(req)
              return isSealed(value) ? (await openMany(req.trans, [value]))[0] : value
            },
            async getMany(req) {
              return openMany(req.trans, await table.getMany(req))
            },
            async query(req) {
              const res = await table.query(req)
              return req.values ? { ...res, result: await openMany(req.trans, res.result) } : res
            },
            async openCursor(req) {
              const cursor = await table.openCursor(req)
              return cursor && req.values ? unsealingCursor(cursor, req.trans, name, openOne) : cursor
            }
          }
        }
      }
    }
  }
}

/** A cursor whose `value` is the opened record: each step waits for the record to be opened before going on. */
function unsealingCursor(cursor: DBCoreCursor, trans: DBCoreTransaction, storeName: string, openOne: (v: unknown) => Promise<unknown>): DBCoreCursor {
  let value: unknown
  const wrapper: DBCoreCursor = {
    get trans() { return cursor.trans },
    get key() { return cursor.key },
    get primaryKey() { return cursor.primaryKey },
    get value() { return value },
    get done() { return cursor.done },
    continue: (k?: unknown) => cursor.continue(k),
    continuePrimaryKey: (k: unknown, p: unknown) => cursor.continuePrimaryKey(k, p),
    advance: (n: number) => cursor.advance(n),
    stop: (v?: unknown) => cursor.stop(v),
    fail: (e: Error) => cursor.fail(e),
    next() {
      let gotOne = 1
      return wrapper.start(() => gotOne-- ? wrapper.continue() : wrapper.stop()).then(() => wrapper)
    },
    start(onNext) {
      return cursor.start(() => {
        whileAlive(trans, storeName, openOne(cursor.value)).then((opened) => {
          value = opened
          onNext()
        }).catch((error: unknown) => cursor.fail(error instanceof Error ? error : new Error(String(error))))
      })
    }
  }
  return wrapper
}
