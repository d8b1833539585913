import { ChangeDetectionStrategy, Component, booleanAttribute, inject, input, output } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';

import type { Upload } from '@shared/contracts/sessions';
import { fileSizeText, uploadFormatText } from '../session-labels';
import { SiteDeskApi } from '../site-desk-api';
import { ZonedTimePipe } from '../zoned-time-pipe';

/** Hex digits of a SHA-256 shown in the list; the full hash is in the title and the download. */
const SHORT_HASH_LENGTH = 12;

/** Every file received for a session, newest first as the server lists them, with what became of each. */
@Component({
  selector: 'app-upload-history',
  imports: [MatButton, MatIcon, ZonedTimePipe],
  templateUrl: './upload-history.html',
  styleUrl: './upload-history.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class UploadHistory {
  private readonly api = inject(SiteDeskApi);

  readonly studyId = input.required<string>();
  readonly uploads = input.required<readonly Upload[]>();
  readonly timeZone = input.required<string>();
  /** Whether rejected files may be processed again (not once the session is locked). */
  readonly canReprocess = input(false, { transform: booleanAttribute });
  /** The upload being processed again, if any. */
  readonly reprocessingId = input<string | null>(null);
  readonly reprocess = output<Upload>();

  protected readonly sizeText = fileSizeText;
  protected readonly formatText = uploadFormatText;

  protected shortHash(sha256: string): string {
    return sha256.length > SHORT_HASH_LENGTH ? `${sha256.slice(0, SHORT_HASH_LENGTH)}…` : sha256;
  }

  protected originalUrl(upload: Upload): string {
    return this.api.originalFileUrl(this.studyId(), upload.sessionId, upload.id);
  }
}
