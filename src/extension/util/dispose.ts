// A base for long-lived host objects: owns the disposables it registers and releases them once, in reverse order.
// Imports only the vscode types (nothing is read from vscode when this module loads).

import type * as vscode from 'vscode';

export abstract class Disposable implements vscode.Disposable {
  private readonly owned: vscode.Disposable[] = [];
  private disposed = false;

  protected get isDisposed(): boolean {
    return this.disposed;
  }

  protected _register<T extends vscode.Disposable>(d: T): T {
    if (this.disposed) d.dispose();
    else this.owned.push(d);
    return d;
  }

  dispose(): void {
    if (this.disposed) return;
    this.disposed = true;
    while (this.owned.length) {
      try { this.owned.pop()!.dispose(); } catch { /* keep releasing the rest */ }
    }
  }
}
