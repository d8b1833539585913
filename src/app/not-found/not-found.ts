import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { Router, RouterLink } from '@angular/router';

/** The page for URLs that match no route. */
@Component({
  selector: 'app-not-found',
  imports: [MatButton, RouterLink],
  template: `
    <main class="not-found" id="main-content" aria-labelledby="not-found-heading">
      <p class="product-name">Tidemark</p>
      <h1 id="not-found-heading">Page not found</h1>
      <p>
        There is no page at <code>{{ path }}</code>. The link may be mistyped, or the page may have
        moved.
      </p>
      <a mat-flat-button routerLink="/">Go to your areas</a>
    </main>
  `,
  styles: `
    .not-found {
      max-width: 40rem;
      margin: 0 auto;
      padding: 4rem 1.5rem;
    }
    .product-name {
      font: var(--mat-sys-title-large);
      font-weight: 700;
      color: var(--mat-sys-primary);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class NotFound {
  protected readonly path = inject(Router).url;
}
