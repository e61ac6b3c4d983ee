/**
 * Furrowcast estimation engine: binary choice models P(adopt = 1 | x) = F(x'b).
 * Pure functions, no I/O; runs in browsers, workers and Node.
 */
export { ENGINE_VERSION, predictedHistogram, runModel, summariseCovariance, type RunOptions } from './run-model'
export * from './types'
export * from './errors'
export * from './values'
export * from './normal'
export * from './links'
export * from './distributions'
export * from './linalg'
export * from './design'
export * from './collinearity'
export * from './separation'
export * from './likelihood'
export * from './fit'
export * from './covariance'
export * from './summary'
export * from './classification'
export * from './margins'
export * from './predict'
export * from './lrtest'
export * from './parallel'
