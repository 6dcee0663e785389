export * as vec3 from './vec3.ts';
export * as mat3 from './mat3.ts';
export * as quat from './quat.ts';
export * as so3 from './so3.ts';
export type { Vec3 } from './vec3.ts';
export type { Mat3 } from './mat3.ts';
export type { Quat } from './quat.ts';
