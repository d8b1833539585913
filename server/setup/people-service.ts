import { randomUUID } from 'node:crypto';
import type { Role } from '../../shared/contracts/auth.js';
import type { AddPerson, Person } from '../../shared/contracts/setup.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import { describeRoles } from '../http/access.js';
import { AppError } from '../http/app-error.js';
import type { Notice } from '../messages/message-service.js';
import type { AssignmentWithUser, SiteRow, StudyRow, StudySetupRepository, UserRow } from './study-setup-repository.js';
import { reasonForChange, requireStudy } from './study-setup-service.js';

/** Sends a user a message (e-mail and in-app); the MessageService in the app. */
export interface Notifier {
  notify(userId: string, notice: Notice): void;
}

/** The people of a study grouped from their assignment rows; a coordinator's site rows collapse into one role. */
export function groupPeople(rows: readonly AssignmentWithUser[]): Person[] {
  const people = new Map<string, Person & { roles: { role: Role; siteIds: string[] | null }[] }>();
  for (const { assignment, user } of rows) {
    const person = people.get(user.id) ?? { userId: user.id, email: user.email, name: user.name, active: user.active, roles: [] };
    people.set(user.id, person);
    const role = assignment.role as Role;
    const held = person.roles.find((entry) => entry.role === role);
    if (!held) person.roles.push({ role, siteIds: assignment.siteId === null ? null : [assignment.siteId] });
    // A study-wide row widens the role to the whole study.
    else if (held.siteIds !== null) held.siteIds = assignment.siteId === null ? null : [...held.siteIds, assignment.siteId];
  }
  return [...people.values()];
}

function sitesInWords(sites: readonly SiteRow[]): string {
  return sites.map((site) => `${site.number} (${site.name})`).join(', ');
}

/** Who works in a study, in which role and at which sites; invitations, role removals and deactivations. */
export class PeopleService {
  constructor(
    private readonly repository: StudySetupRepository,
    private readonly audit: AuditTrail,
    private readonly notifier: Notifier,
    private readonly clock: () => Date,
  ) {}

  list(studyId: string): Person[] {
    requireStudy(this.repository, studyId);
    return groupPeople(this.repository.assignmentsOfStudy(studyId));
  }

  /**
   * Gives a person a role in the study, creating their account when the e-mail is new, and sends
   * them an invitation. A site coordinator is limited to sites of this study; other roles to none.
   */
  add(actor: AuditActor, inviterName: string, studyId: string, input: AddPerson): Person {
    const study = requireStudy(this.repository, studyId);
    const sites = this.sitesOfStudy(study, [...new Set(input.siteIds ?? [])]);
    const existing = this.repository.findUserByEmail(input.email);
    if (existing && !existing.active) {
      throw AppError.conflict(`The account ${existing.email} is deactivated; it cannot be given a role.`, undefined, 'user-inactive');
    }
    if (existing) this.refuseDuplicate(existing, study, input.role, sites);
    const reason = reasonForChange(this.repository, study, input.reason, `giving ${input.email} the role ${describeRoles([input.role])}`);

    const user: UserRow = existing ?? { id: randomUUID(), email: input.email, name: input.name, active: true, createdAt: this.clock().toISOString() };
    const now = this.clock().toISOString();
    this.audit.write(actor, (record) => {
      if (!existing) {
        this.repository.insertUser(user);
        record({ studyId, entity: 'user', entityId: user.id, action: 'create', newValue: { email: user.email, name: user.name }, reason });
      }
      for (const site of sites.length > 0 ? sites : [null]) {
        const id = randomUUID();
        this.repository.insertAssignment({ id, userId: user.id, studyId, role: input.role, siteId: site?.id ?? null, createdAt: now });
        record({
          studyId,
          siteId: site?.id ?? null,
          entity: 'role-assignment',
          entityId: id,
          action: 'assign',
          newValue: { userId: user.id, email: user.email, role: input.role, siteId: site?.id ?? null, siteNumber: site?.number ?? null },
          reason,
        });
      }
    });
    this.notifier.notify(user.id, this.invitation(inviterName, study, input.role, sites, user.email));
    return this.list(studyId).find((person) => person.userId === user.id)!;
  }

  /** Removes one role (for a site coordinator: at one site, or at all of them) from a person in the study. */
  removeRole(actor: AuditActor, studyId: string, userId: string, role: Role, siteId: string | undefined, reasonGiven: string | undefined): void {
    const study = requireStudy(this.repository, studyId);
    const user = this.requireUser(userId);
    const rows = this.repository.assignmentsOf(userId, studyId, role).filter((row) => siteId === undefined || row.siteId === siteId);
    if (rows.length === 0) {
      throw AppError.notFound(`${user.name} holds no ${describeRoles([role])} role in this study${siteId ? ' at that site' : ''}.`);
    }
    if (role === 'study-admin') this.refuseLastAdmin(user, [study]);
    const reason = reasonForChange(this.repository, study, reasonGiven, `removing the ${describeRoles([role])} role of ${user.name}`);
    this.audit.write(actor, (record) => {
      for (const row of rows) {
        this.repository.deleteAssignment(row.id);
        record({
          studyId,
          siteId: row.siteId,
          entity: 'role-assignment',
          entityId: row.id,
          action: 'remove',
          oldValue: { userId, email: user.email, role, siteId: row.siteId },
          reason,
        });
      }
    });
  }

  /**
   * Deactivates an account: it can no longer sign in, and its open sessions and API tokens are
   * refused (the auth service checks `active` on every request). The user row stays, so the audit
   * trail keeps naming who did what. Deactivation applies in every study the person works in.
   */
  deactivate(actor: AuditActor, studyId: string, userId: string, reason: string): Person {
    const study = requireStudy(this.repository, studyId);
    const user = this.requireUser(userId);
    if (this.repository.assignmentsOf(userId, studyId).length === 0) {
      throw AppError.notFound(`${user.name} holds no role in this study.`);
    }
    if (userId === actor.userId) {
      throw AppError.conflict('You cannot deactivate your own account; ask another study admin.', undefined, 'cannot-deactivate-self');
    }
    // An account is global: an admin may switch it off only when every study it serves is theirs,
    // or an admin of one study could shut a person out of all the others.
    const administered = new Set(this.repository.studiesAdministeredBy(actor.userId).map((row) => row.id));
    const elsewhere = this.repository.studyIdsOf(userId).filter((id) => !administered.has(id));
    if (elsewhere.length > 0) {
      throw AppError.forbidden(
        `${user.name} also holds roles in ${elsewhere.length === 1 ? 'a study' : `${elsewhere.length} studies`} you do not administer; ` +
          'remove their roles in this study instead, or ask the admins of the other studies.',
        'account-used-elsewhere',
      );
    }
    if (user.active) {
      this.refuseLastAdmin(user, this.repository.studiesAdministeredBy(userId));
      this.audit.write(actor, (record) => {
        this.repository.setUserActive(userId, false);
        record({ studyId: study.id, entity: 'user', entityId: userId, action: 'deactivate', oldValue: { active: true }, newValue: { active: false }, reason });
      });
    }
    return this.list(studyId).find((person) => person.userId === userId)!;
  }

  private requireUser(userId: string): UserRow {
    const user = this.repository.findUser(userId);
    if (!user) throw AppError.notFound('There is no such user.');
    return user;
  }

  /** The named sites, each of which must belong to this study. */
  private sitesOfStudy(study: StudyRow, siteIds: readonly string[]): SiteRow[] {
    return siteIds.map((siteId) => {
      const site = this.repository.findSiteAnywhere(siteId);
      if (!site || site.studyId !== study.id) {
        const otherStudy = site ? this.repository.findStudy(site.studyId) : undefined;
        const where = site ? `site ${site.number} belongs to study ${otherStudy?.code ?? site.studyId}` : `there is no site ${siteId}`;
        throw new AppError(
          422,
          'site-outside-study',
          `A site coordinator of ${study.code} can only be assigned to sites of ${study.code}; ${where}.`,
          { siteId },
        );
      }
      return site;
    });
  }

  private refuseDuplicate(user: UserRow, study: StudyRow, role: Role, sites: readonly SiteRow[]): void {
    const held = this.repository.assignmentsOf(user.id, study.id, role);
    if (held.length === 0) return;
    const label = describeRoles([role]);
    if (role !== 'site-coordinator' || held.some((row) => row.siteId === null)) {
      throw AppError.conflict(`${user.name} (${user.email}) already holds the ${label} role in ${study.code}.`, undefined, 'role-exists');
    }
    const heldSiteIds = new Set(held.map((row) => row.siteId));
    const again = sites.filter((site) => heldSiteIds.has(site.id));
    if (again.length > 0) {
      throw AppError.conflict(
        `${user.name} (${user.email}) is already ${label} at site ${sitesInWords(again)} in ${study.code}.`,
        undefined,
        'role-exists',
      );
    }
  }

  /** A study must keep at least one active study admin, or nobody could change its setup. */
  private refuseLastAdmin(user: UserRow, studies: readonly StudyRow[]): void {
    if (!user.active) return;
    const orphaned = studies.filter((study) => !this.repository.activeHoldersOf(study.id, 'study-admin').some((admin) => admin.id !== user.id));
    if (orphaned.length > 0) {
      throw AppError.conflict(
        `${user.name} is the only active study admin of ${orphaned.map((study) => study.code).join(', ')}; give someone else that role first.`,
        undefined,
        'last-study-admin',
      );
    }
  }

  private invitation(inviterName: string, study: StudyRow, role: Role, sites: readonly SiteRow[], email: string): Notice {
    const label = describeRoles([role]);
    const where = sites.length > 0 ? ` at site${sites.length > 1 ? 's' : ''} ${sitesInWords(sites)}` : '';
    return {
      subject: `Tidemark: you are ${label} in study ${study.code}`,
      body:
        `${inviterName} gave you the ${label} role in study ${study.code} (${study.title})${where}.\n\n` +
        `Sign in to Tidemark with your organisation account ${email}.`,
      link: '/',
    };
  }
}
