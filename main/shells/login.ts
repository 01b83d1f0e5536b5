// Runs in Node (served to the browser as text). The sign-in page of the web mode on a network: paste the
// access token, or open the sign-in link printed at start (the token rides in the #fragment, which the
// browser never sends to any server and which the page wipes from the address bar and history at once).
// Script and styles are files of their own: the Content Security Policy allows no inline code.

export const LOGIN_HTML = `<!doctype html>
<html lang="en">
  <head>
    <meta charset="utf-8" />
    <meta name="viewport" content="width=device-width, initial-scale=1" />
    <meta name="referrer" content="no-referrer" />
    <title>Nullbench · sign in</title>
    <link rel="icon" href="icon.svg" />
    <link rel="stylesheet" href="style.css" />
  </head>
  <body>
    <div class="overlay">
      <form class="dialog stack signin" id="signin" autocomplete="off">
        <h1>Sign in to this bench</h1>
        <p class="hint">This bench asks for its access token: paste the one shown when the server was started
          (it starts with nbt_).</p>
        <label>Access token
          <input id="token" name="token" type="password" required spellcheck="false" autocomplete="off" />
        </label>
        <p id="message" class="error-text" role="alert"></p>
        <div class="row"><button class="primary" type="submit">Sign in</button></div>
      </form>
    </div>
    <script src="login.js"></script>
  </body>
</html>
`;

export const LOGIN_JS = `'use strict';
(function () {
  var form = document.getElementById('signin');
  var field = document.getElementById('token');
  var message = document.getElementById('message');
  function signIn(token) {
    message.textContent = '';
    return fetch('api/login', {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ token: token }),
      credentials: 'same-origin',
    }).then(function (res) {
      if (res.status === 204) {
        location.replace('./');
        return;
      }
      return res.json().then(function (body) {
        message.textContent = (body && body.message) || 'sign-in failed (HTTP ' + res.status + ')';
      });
    }, function () {
      message.textContent = 'the Nullbench server does not answer';
    });
  }
  form.addEventListener('submit', function (e) {
    e.preventDefault();
    signIn(field.value.trim());
  });
  function fromLink() {
    var m = /^#token=([A-Za-z0-9_-]+)$/.exec(location.hash);
    if (!m) return;
    // Out of the address bar and the history before anything else happens.
    history.replaceState(null, '', location.pathname);
    signIn(m[1]);
  }
  // The link may also be opened over this very page, which then only changes its #fragment.
  window.addEventListener('hashchange', fromLink);
  fromLink();
})();
`;
