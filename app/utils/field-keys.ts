// The open data keys of this page, per person: set by an unlock, removed by a lock, never written anywhere.
const openKeys = new Map<number, CryptoKey>()

export function openKeyOf(userId: number): CryptoKey | null {
  return openKeys.get(userId) ?? null
}

export function setOpenKey(userId: number, key: CryptoKey) {
  openKeys.set(userId, key)
}

export function lockVault(userId: number) {
  openKeys.delete(userId)
}
