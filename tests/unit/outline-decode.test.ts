import { describe, expect, it } from 'vitest'
import type { Topology } from 'topojson-specification'
import countries from 'world-atlas/countries-50m.json'
import { decodeOutlines } from '../../app/utils/outline-decode'

describe('base layer outlines decoded for the worker', () => {
  it('keeps the countries whose extent meets the villages\' surroundings and leaves out the rest of the world', () => {
    // Around an invented district on Lake Victoria's shore, with the map's wide margin.
    const near = decodeOutlines(countries as unknown as Topology, [-3, 31, 1, 36])
    const names = near.features.map(f => String(f.properties?.name))
    expect(names).toEqual(expect.arrayContaining(['Kenya', 'Uganda', 'Tanzania']))
    // (A country whose parts lie far apart, or across the date line, has an extent that meets nearly everything:
    // France with Réunion, Russia, New Zealand. A few extra outlines cost little; a missing one would show.)
    for (const far of ['Brazil', 'Japan', 'Germany', 'Nigeria', 'Australia']) expect(names).not.toContain(far)
    expect(near.features.length).toBeLessThan(15)
    expect(near.features.every(f => f.geometry.type === 'Polygon' || f.geometry.type === 'MultiPolygon')).toBe(true)
  })
})
