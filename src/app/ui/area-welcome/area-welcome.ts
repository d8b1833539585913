import { ChangeDetectionStrategy, Component, booleanAttribute, computed, input } from '@angular/core';

import type { RoleAssignment } from '@shared/contracts/auth';
import { CautionNote } from '../caution-note/caution-note';

/**
 * The opening of an area's home page: the area's name, what the role does there (projected
 * content), the studies the user holds the role in, and the place where results will appear.
 */
@Component({
  selector: 'app-area-welcome',
  imports: [CautionNote],
  templateUrl: './area-welcome.html',
  styleUrl: './area-welcome.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AreaWelcome {
  readonly areaName = input.required<string>();
  readonly roleLabel = input.required<string>();
  /** The user's assignments for this area's role. */
  readonly assignments = input.required<readonly RoleAssignment[]>();
  /** Whether to list the sites of each assignment (site coordinators work per site). */
  readonly showSites = input(false, { transform: booleanAttribute });
  readonly resultsHeading = input('Results');
  /** Readable labels for site ids; an id without a label is shown as it is. */
  readonly siteLabels = input<Readonly<Record<string, string>>>({});

  protected siteLabel(siteId: string): string {
    return this.siteLabels()[siteId] ?? siteId;
  }

  protected readonly studySummary = computed(() => {
    const count = this.assignments().length;
    return count === 1 ? 'one study' : `${count} studies`;
  });
}
