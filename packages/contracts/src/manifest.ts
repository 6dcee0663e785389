import { z } from 'zod';
import { OdometrySource } from './vocabulary.ts';

export const MANIFEST_FORMAT = 'plumbline-run/1';

const Vec3 = z.tuple([z.number().finite(), z.number().finite(), z.number().finite()]);
const QuatWxyz = z
  .tuple([z.number().finite(), z.number().finite(), z.number().finite(), z.number().finite()])
  .refine((q) => Math.abs(Math.hypot(...q) - 1) < 1e-3, { message: 'rotation_wxyz must be a unit quaternion (|q| within 1e-3 of 1)' });

/** A relative path inside the bundle: no absolute paths, no `..` segments, no backslashes. */
export const BundlePath = z
  .string()
  .min(1)
  .max(255)
  .refine((p) => !p.startsWith('/') && !p.split('/').includes('..') && !p.includes('\\') && !p.includes('\0'), {
    message: 'must be a relative path inside the bundle (no "/" prefix, no "..")',
  });

const Identifier = z
  .string()
  .min(1)
  .max(128)
  .regex(/^[A-Za-z0-9][A-Za-z0-9._:-]*$/, 'letters, digits and . _ : - only, starting with a letter or digit');

/** `run.json`, the manifest of a run bundle (format plumbline-run/1; see docs/bundle-format.md). */
export const RunManifest = z
  .object({
    format: z.literal(MANIFEST_FORMAT),
    robot_id: Identifier,
    run_id: Identifier,
    site: Identifier,
    started_at: z.iso.datetime({ offset: true }),
    /** Free-form version strings of the robot's software, e.g. {"odometry": "4.2.1"}. */
    software: z.record(z.string(), z.string()).default({}),
    /** Robot model, used to pick policy thresholds; optional. */
    robot_model: z.string().max(128).optional(),
    odometry: z
      .object({
        file: BundlePath,
        source: OdometrySource,
        monocular: z.boolean(),
        world_gravity_aligned: z.boolean(),
      })
      .strict(),
    imu: z
      .object({
        file: BundlePath,
        rate_hz: z.number().positive().max(10_000),
        gyro_range_rad_s: z.number().positive().optional(),
        accel_range_m_s2: z.number().positive().optional(),
        /** rad/s/√Hz */
        gyro_noise_density: z.number().positive().optional(),
        /** m/s²/√Hz */
        accel_noise_density: z.number().positive().optional(),
      })
      .strict(),
    extrinsics: z
      .object({
        /** Pose of the odometry body frame in the IMU frame. */
        imu_T_odom: z.object({ translation: Vec3, rotation_wxyz: QuatWxyz }).strict(),
      })
      .strict(),
    gnss: z
      .object({
        file: BundlePath,
        /** GNSS antenna phase centre in the IMU frame, metres. */
        antenna_in_imu: Vec3.default([0, 0, 0]),
      })
      .strict()
      .optional(),
    loops: z.object({ file: BundlePath }).strict().optional(),
    dock: z.object({ returns_to_start: z.boolean() }).strict().optional(),
  })
  .strict();
export type RunManifest = z.infer<typeof RunManifest>;
export type RunManifestInput = z.input<typeof RunManifest>;
