/** `headroom demo`: the invented parcel-inspection scenario, its reference and config (pure), and the embedded and Kafka runs (I/O edge). */
export { drawParcel, PARCEL_LINES, PARCEL_MODEL, PARCEL_VERSION, seededRandom, surenessExponent } from './parcels.js';
export type { Parcel } from './parcels.js';
export { checkScenarioOptions, clockText, DRIFTING_LINE, expectedShare, fogAt, FOG_MAX, MAX_EVENTS_PER_SECOND, ParcelScenario, SCENARIO_DEFAULTS } from './scenario.js';
export type { ScenarioEvent, ScenarioOptions } from './scenario.js';
export { DEMO_GROUP, DEMO_THETA, demoConfig, demoConfigDocument, EVALUATE_EVERY_SCENARIO_MS, EXPECTED_ALERTS } from './config.js';
export type { DemoConfigOptions } from './config.js';
export { demoReference, demoReferenceFile, demoReferenceText, REFERENCE_EVENTS } from './reference.js';
export { EMBEDDED_TOPIC, EmbeddedPartitions } from './pipeline.js';
export { rehearse } from './rehearse.js';
export type { Firing, RehearsalOptions } from './rehearse.js';
export { MAX_SPEED, scenarioClock } from './clock.js';
export type { ScenarioClock } from './clock.js';
export { createEmbeddedDemo } from './embedded.js';
export type { EmbeddedDemo, EmbeddedDemoOptions } from './embedded.js';
export { createKafkaDemo } from './kafka.js';
export type { KafkaDemo, KafkaDemoOptions } from './kafka.js';
export { solvedThresholds } from './thresholds.js';
