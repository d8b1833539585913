import { ChangeDetectionStrategy, Component, input, output } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';

import type { QueueItem } from '@shared/contracts/reading';
import { READ_KIND_LABELS, blindContextText, utcText } from '../read-labels';

/**
 * Sessions waiting for a read, as the blinding lets a reader see them: kind of read, where in the
 * schedule (when the study shows it), number of efforts and when the read is due.
 */
@Component({
  selector: 'app-queue-table',
  imports: [MatButton, MatIcon],
  templateUrl: './queue-table.html',
  styleUrl: './queue-table.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class QueueTable {
  readonly items = input.required<readonly QueueItem[]>();
  /** The token being claimed, while the claim is under way. */
  readonly claimingToken = input<string | null>(null);
  readonly claim = output<QueueItem>();

  protected readonly kindLabels = READ_KIND_LABELS;
  protected readonly contextText = blindContextText;
  protected readonly utcText = utcText;
}
