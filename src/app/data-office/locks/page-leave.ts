import { DOCUMENT } from '@angular/common';
import { Injectable, inject } from '@angular/core';

/**
 * Leaves the single-page app for a server route (the identity provider's round trip). A service
 * of its own so that tests can see where the page would go without leaving.
 */
@Injectable({ providedIn: 'root' })
export class PageLeave {
  private readonly document = inject(DOCUMENT);

  /** Loads `url` in this tab. */
  goTo(url: string): void {
    this.document.location.assign(url);
  }
}
