/**
 * Seeds the invented demo scenario once (idempotent) and writes the simulator's fleet file
 * (`.data/demo-controllers.json`, git-ignored) with the controllers' device secrets.
 */
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Models } from '../models';
import type { Sequelize } from 'sequelize';
import { hashSecret } from '../auth/passwords';
import { hashDeviceSecret, newDeviceSecret } from '../controllers/secrets';
import { DEFAULT_VALVE_FULL_STEPS } from '../../shared/domain';
import { DEMO_CUSTOMERS, DEMO_USERS } from './demoData';
import { fleetEntryFor } from '../../simulator/fleetFile';

export interface SeedResult {
  created: boolean;
  fleetFile: string;
  controllers: number;
}

/** Creates the demo rows when absent, and (re)writes the fleet file when created or missing. */
export async function seedDemo(sequelize: Sequelize, models: Models, fleetFile: string): Promise<SeedResult> {
  const firstCustomer = DEMO_CUSTOMERS[0];
  if (!firstCustomer) throw new Error('no demo customers');
  let created = false;
  if (!(await models.Customer.findOne({ where: { name: firstCustomer.name } }))) {
    created = true;
    await sequelize.transaction(async (transaction) => {
      let serialNo = 1001;
      const customerIds = new Map<string, number>();
      for (const c of DEMO_CUSTOMERS) {
        const customer = await models.Customer.create(
          { name: c.name, contactName: c.contactName, contactEmail: c.contactEmail, contactPhone: c.contactPhone, notes: null },
          { transaction },
        );
        customerIds.set(c.name, customer.id);
        for (const s of c.sites) {
          const site = await models.Site.create(
            { customerId: customer.id, name: s.name, address: s.address, timeZone: s.timeZone, elevationM: s.elevationM },
            { transaction },
          );
          for (const b of s.boxes) {
            const box = await models.Box.create({ ...b, siteId: site.id, customerId: customer.id }, { transaction });
            await models.Controller.create(
              {
                boxId: box.id,
                serial: `KR-${serialNo++}`,
                secretHash: hashDeviceSecret(newDeviceSecret()),
                valveFullSteps: DEFAULT_VALVE_FULL_STEPS,
                firmware: b.valveType === 'eev' ? 'rh-eev 1.4.2' : 'rh-node 0.9.0',
                lastSeenAt: null,
                secretRotatedAt: null,
              },
              { transaction },
            );
          }
        }
      }
      for (const u of DEMO_USERS) {
        await models.User.create(
          {
            email: u.email,
            name: u.name,
            role: u.role,
            customerId: u.customer ? (customerIds.get(u.customer) ?? null) : null,
            passwordHash: await hashSecret(u.password),
            inviteTokenHash: null,
            inviteExpiresAt: null,
            invitedAt: null,
            lastLoginAt: null,
            lockedUntil: null,
          },
          { transaction },
        );
      }
      // The demo technician is on call around the clock, so demo alarms mail the dev mailbox.
      const tech = await models.User.findOne({ where: { email: 'tech@kettleridge.example.com' }, transaction });
      const week = [{ userId: tech?.id ?? 0, weekday: 1, start: '00:00', durationMin: 7 * 24 * 60 }];
      if (tech) await models.OncallRotation.create({ name: 'Demo on-call', timeZone: 'America/Chicago', shifts: JSON.stringify(week) }, { transaction });
    });
  }
  let controllers = 0;
  if (created || !existsSync(fleetFile)) controllers = await writeFleetFile(models, fleetFile);
  return { created, fleetFile, controllers };
}

/** E-mail addresses of the demo accounts (whose passwords the README publishes) that are enabled in this database. */
export async function demoAccountsPresent(models: Models): Promise<string[]> {
  const rows = await models.User.findAll({ where: { email: DEMO_USERS.map((u) => u.email), disabled: false }, attributes: ['email'] });
  return rows.map((r) => r.email);
}

/** Gives every demo controller a fresh secret and writes them with their box settings for the simulator. */
export async function writeFleetFile(models: Models, fleetFile: string): Promise<number> {
  const rows = await models.Controller.findAll({
    where: { disabled: false },
    include: [{ model: models.Box, as: 'box', include: [{ model: models.Site, as: 'site' }] }],
    order: [['id', 'ASC']],
  });
  const out = [];
  for (const c of rows) {
    const box = (c as unknown as { box: InstanceType<Models['Box']> & { site: InstanceType<Models['Site']> } }).box;
    if (!c.serial.startsWith('KR-')) continue;
    const secret = newDeviceSecret();
    await c.update({ secretHash: hashDeviceSecret(secret), secretRotatedAt: new Date() });
    out.push(fleetEntryFor(box, { serial: c.serial, secret, valveFullSteps: c.valveFullSteps }, box.site.elevationM));
  }
  mkdirSync(path.dirname(fleetFile), { recursive: true });
  writeFileSync(fleetFile, JSON.stringify({ controllers: out }, null, 2), { mode: 0o600 });
  return out.length;
}
