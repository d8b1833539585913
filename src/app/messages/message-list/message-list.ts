import { DOCUMENT } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { Router, RouterLink, type UrlTree } from '@angular/router';

import type { UserMessage } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { MessagesApi } from '../messages-api';

const DELIVERY_TEXT: Readonly<Record<UserMessage['delivery'], string>> = {
  pending: 'E-mail on its way',
  sent: 'Sent by e-mail',
  failed: 'E-mail could not be delivered; it is only here',
};

const DATE_FORMAT = new Intl.DateTimeFormat(undefined, { dateStyle: 'medium', timeStyle: 'short' });

/** Every message Tidemark sent the user, newest as the server orders them, with a way into the app. */
@Component({
  selector: 'app-message-list',
  imports: [MatIcon, MatProgressBar, RouterLink],
  templateUrl: './message-list.html',
  styleUrl: './message-list.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class MessageListPage {
  private readonly router = inject(Router);
  private readonly baseUri = inject(DOCUMENT).baseURI;

  protected readonly messages = inject(MessagesApi).myMessages();
  protected readonly list = computed<readonly UserMessage[]>(() => (this.messages.hasValue() ? this.messages.value() : []));
  /** Each message with its in-app link, worked out once per answer rather than on every check. */
  protected readonly items = computed(() => this.list().map((message) => ({ message, link: this.appLink(message.link) })));
  protected readonly loadError = computed(() => {
    const error = this.messages.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'Your messages could not be read. Reload the page to try again.';
  });
  protected readonly deliveryText = DELIVERY_TEXT;

  protected dateText(iso: string): string {
    const date = new Date(iso);
    return Number.isNaN(date.getTime()) ? iso : DATE_FORMAT.format(date);
  }

  /**
   * The in-app route of a message link. Only links to this app are followed: an e-mail carries the
   * full address, the app needs the path.
   */
  private appLink(link: string | null): UrlTree | null {
    if (!link) return null;
    const url = new URL(link, this.baseUri);
    if (url.origin !== new URL(this.baseUri).origin) return null;
    return this.router.parseUrl(`${url.pathname}${url.search}${url.hash}`);
  }
}
