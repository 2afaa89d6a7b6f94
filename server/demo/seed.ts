import { hashPassword } from '../auth/password.ts';
import type { Db } from '../db/client.ts';
import type { FeedlineSection } from '../../shared/schemas/feedlines.ts';
import { catalogOnly } from '../../shared/calculations/cable-lookup.ts';
import { sectionModels } from '../../shared/calculations/line-models.ts';
import type { SweepMask } from '../../shared/sweep/analyse.ts';
import { moveSweepThroughLine } from '../../shared/sweep/move.ts';
import type { SweepPointInput } from '../../shared/sweep/points.ts';
import { findFeedlineByName, insertFeedline } from '../api/v1/feedlines/feedlines.repository.ts';
import { findMemberByEmail, insertMember } from '../api/v1/members/members.repository.ts';
import { ensureOrganisation } from '../api/v1/organisation/organisation.repository.ts';
import { sweepIdByName } from '../api/v1/sweeps/sweeps.repository.ts';
import { storeSweep } from '../api/v1/sweeps/sweeps.service.ts';

/** The invented demo scenario: a small club station on a windy ridge. */
export const DEMO_ORGANISATION = { name: 'Kestrel Ridge Radio Club', slug: 'kestrel-ridge' } as const;

/** The club's feed line from the radio hut to its 40 m dipole (invented). */
export const DEMO_FEEDLINE = {
  name: 'Radio hut to ridge mast (40 m dipole)',
  notes: 'Demo data: an invented station. The buried run ends in an N barrel at the mast foot; a lighter cable goes up the mast.',
  sections: [
    { cableId: 'rg-213', lengthM: 26, label: 'Buried run, hut to mast foot' },
    { insertionLossDb: 0.12, label: 'N barrel at the mast foot' },
    { cableId: 'rg-8x', lengthM: 9, label: 'Up the mast to the feed point' },
  ] satisfies FeedlineSection[],
};

const DEMO_MASK: SweepMask = { maxSwr: 1.5, startHz: 7_000_000, stopHz: 7_200_000 };

/**
 * A centre-fed dipole near resonance as a series RLC circuit: Z = R + j·R·Q·(f/f0 − f0/f).
 * Invented values; the shape is the textbook one for a single resonance.
 */
function seriesRlcSweep(resistanceOhm: number, resonanceHz: number, q: number): SweepPointInput[] {
  const points: SweepPointInput[] = [];
  for (let i = 0; i <= 120; i++) {
    const f = 6_800_000 + i * 5_000;
    points.push({ frequencyHz: f, loadOhm: { re: resistanceOhm, im: resistanceOhm * q * (f / resonanceHz - resonanceHz / f) } });
  }
  return points;
}

/**
 * The demo station's saved feed line and two sweeps of its dipole: one taken at the hut after a retune
 * and moved up the feed line (inside the mask), one taken at the feed point before the retune (outside
 * it). Each is added only when missing, by name.
 */
async function seedDemoStation(db: Db, organisationId: string, adminId: string): Promise<void> {
  const feedline =
    (await findFeedlineByName(db, { organisationId, name: DEMO_FEEDLINE.name })) ??
    (await insertFeedline(db, { organisationId, createdBy: adminId, ...DEMO_FEEDLINE }));

  const demos = [
    {
      name: 'Ridge dipole from the hut, after retune',
      antenna: seriesRlcSweep(52, 7_095_000, 9),
      measuredAtHut: true,
    },
    {
      name: 'Ridge dipole at the feed point, before retune',
      antenna: seriesRlcSweep(38, 6_930_000, 11),
      measuredAtHut: false,
    },
  ];
  for (const demo of demos) {
    if (await sweepIdByName(db, { organisationId, name: demo.name })) continue;
    const referenceOhm = 50;
    // What an analyzer at the hut would have shown: the antenna carried down the feed line.
    const measured = demo.measuredAtHut
      ? moveSweepThroughLine({ referenceOhm, points: demo.antenna }, (f) => sectionModels(feedline.sections, f, catalogOnly, 'line'), 'loadToInput').points
      : demo.antenna;
    // Stored as an upload of the same points would be: moved back up the saved feed line when taken at the hut.
    await storeSweep(db, {
      organisationId,
      createdBy: adminId,
      name: demo.name,
      sourceFormat: 'json',
      fileName: null,
      referenceOhm,
      measured,
      mask: DEMO_MASK,
      ...(demo.measuredAtHut ? { feedlineId: feedline.id, direction: 'inputToLoad' as const } : {}),
    });
  }
}

/**
 * Creates the demo organisation, its admin and the demo station's feed line and sweeps when missing;
 * leaves existing data alone, so a second `npm start` keeps whatever the user changed. Never called in
 * production mode.
 */
export async function seedDemo(db: Db, admin: { email: string; password: string }): Promise<{ organisationId: string; adminId: string }> {
  const { organisationId, adminId } = await db.transaction(async (tx) => {
    const organisationId = await ensureOrganisation(tx, DEMO_ORGANISATION);
    const existing = await findMemberByEmail(tx, admin.email);
    if (existing) return { organisationId, adminId: existing.id };
    const created = await insertMember(tx, { organisationId, email: admin.email.toLowerCase(), displayName: 'Demo Admin', role: 'admin', passwordHash: await hashPassword(admin.password) });
    return { organisationId, adminId: created.id };
  });
  // Each station item is added only when missing, by name, so a seed interrupted here completes next time.
  await seedDemoStation(db, organisationId, adminId);
  return { organisationId, adminId };
}
