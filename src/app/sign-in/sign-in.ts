import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';

import { loginUrl } from './return-path';
import { signInErrorMessage } from './sign-in-messages';

/**
 * The sign-in page. Signing in is a full page load to the server's `/auth/login`, which hands
 * over to the identity provider and comes back to `returnTo`.
 */
@Component({
  selector: 'app-sign-in',
  imports: [MatButton, MatIcon],
  templateUrl: './sign-in.html',
  styleUrl: './sign-in.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SignIn {
  /** Query parameter: where to go after signing in. */
  readonly returnTo = input<string>();
  /** Query parameter: why the last attempt did not complete. */
  readonly error = input<string>();

  protected readonly loginHref = computed(() => loginUrl(this.returnTo()));
  protected readonly errorMessage = computed(() => signInErrorMessage(this.error()));
}
