import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';
import { RouterLink } from '@angular/router';

import type { RuleSetSummary } from '@shared/contracts/protocols';
import { ApiError } from '../../../core/http/api-error';
import { SetupProtocolsApi } from '../../setup-protocols-api';
import { ruleSetRef } from '../rule-set-labels';
import { COMPARE_LINK, REPLAY_LINK, ruleSetLink } from '../rule-set-links';

/** The protocol rule sets Tidemark knows: each version, its rule count, and files that cannot be used. */
@Component({
  selector: 'app-rule-set-list',
  imports: [MatTableModule, MatButton, MatIcon, MatProgressBar, RouterLink],
  templateUrl: './rule-set-list.html',
  styleUrl: './rule-set-list.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class RuleSetListPage {
  protected readonly ruleSets = inject(SetupProtocolsApi).ruleSets();
  protected readonly columns = ['ruleSet', 'basedOn', 'ruleCount', 'fromMemoryCount'] as const;
  protected readonly rows = computed<readonly RuleSetSummary[]>(() => (this.ruleSets.hasValue() ? this.ruleSets.value() : []));
  protected readonly usable = computed(() => this.rows().filter((row) => row.problem === null));
  protected readonly broken = computed(() => this.rows().filter((row) => row.problem !== null));
  protected readonly loadError = computed(() => {
    const error = this.ruleSets.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The rule sets could not be read. Reload the page to try again.';
  });
  protected readonly refOf = ruleSetRef;
  protected readonly compareLink = COMPARE_LINK;
  protected readonly replayLink = REPLAY_LINK;

  protected linkOf(row: RuleSetSummary): (string | number)[] {
    return ruleSetLink(row.id, row.version ?? 1);
  }
}
