import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import { CautionNote } from '../../ui/caution-note/caution-note';
import { OpenQueriesNotice } from '../session-queries/open-queries-notice';
import { SessionList } from '../session-list/session-list';
import { SiteDeskSelection } from '../site-desk-selection';
import { SitePicker } from '../site-picker/site-picker';

/** Home of the site desk: queries waiting for an answer, the chosen site's sessions, and the way to register the next one. */
@Component({
  selector: 'app-site-desk-home',
  imports: [MatButton, MatIcon, RouterLink, CautionNote, OpenQueriesNotice, SessionList, SitePicker],
  templateUrl: './site-desk-home.html',
  styleUrl: './site-desk-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SiteDeskHome {
  protected readonly selection = inject(SiteDeskSelection);
}
