import { describe, expect, it } from 'vitest'
import { jsonShapeProblem } from '../../../server/utils/json-shape'
import { deviceLabel } from '../../../shared/utils/device-label'

describe('jsonShapeProblem', () => {
  it('passes ordinary bodies', () => {
    expect(jsonShapeProblem(JSON.stringify({ visits: [{ id: 'a', answers: { x: [1, 2, 3] } }], note: '[[[ not brackets ]]]' }))).toBeNull()
    expect(jsonShapeProblem('')).toBeNull()
    expect(jsonShapeProblem('[]')).toBeNull()
  })

  it('counts nesting, ignoring brackets inside strings', () => {
    expect(jsonShapeProblem('['.repeat(32) + ']'.repeat(32), 32)).toBeNull()
    expect(jsonShapeProblem('['.repeat(33) + ']'.repeat(33), 32)).toMatch(/nested more than 32/)
    expect(jsonShapeProblem(`{"a":"${'['.repeat(100)}"}`, 32)).toBeNull()
    expect(jsonShapeProblem(`{"a":"\\"${'{'.repeat(100)}"}`, 32)).toBeNull()
  })

  it('counts the items of each array, not of the whole body', () => {
    const list = (n: number, item = '1') => `[${Array.from({ length: n }, () => item).join(',')}]`
    expect(jsonShapeProblem(list(100), 32, 100)).toBeNull()
    expect(jsonShapeProblem(list(101), 32, 100)).toMatch(/more than 100 items/)
    expect(jsonShapeProblem(`[${Array.from({ length: 60 }, () => list(60)).join(',')}]`, 32, 100)).toBeNull()
    // Commas inside strings and objects are not items of the array.
    expect(jsonShapeProblem(`[${Array.from({ length: 50 }, () => '{"a":1,"b":"x,y,z"}').join(',')}]`, 32, 100)).toBeNull()
    expect(jsonShapeProblem(`{"coordinates":${list(5001, '[1,2]')}}`, 32, 5000)).toMatch(/more than 5000 items/)
  })
})

describe('deviceLabel', () => {
  it.each([
    ['Mozilla/5.0 (Linux; Android 13; SM-T220) AppleWebKit/537.36 (KHTML, like Gecko) Chrome/120.0 Safari/537.36', 'Chrome on Android'],
    ['Mozilla/5.0 (Windows NT 10.0; Win64; x64; rv:121.0) Gecko/20100101 Firefox/121.0', 'Firefox on Windows'],
    ['Mozilla/5.0 (iPad; CPU OS 17_0 like Mac OS X) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.0 Mobile/15E148 Safari/604.1', 'Safari on iOS'],
    ['Mozilla/5.0 (X11; Linux x86_64) AppleWebKit/537.36 (KHTML, like Gecko) HeadlessChrome/140.0 Safari/537.36', 'Headless Chrome on Linux'],
    ['node', 'Script or tool'],
    [null, 'Unknown device']
  ])('%s → %s', (agent, label) => {
    expect(deviceLabel(agent)).toBe(label)
  })
})
