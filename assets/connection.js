/* A tab that knows when the server is gone.
 *
 * Every callback of the app is a request to the server. When one fails because the server does
 * not answer (stopped, unreachable, or a gateway in between saying so), the tab says so in a
 * banner and marks the panels, the K box and every number on screen as stale: they show the
 * last answer, not the current state. The next answer that arrives clears the mark.
 */
(function () {
    'use strict';
    if (!window.fetch) { return; }
    var realFetch = window.fetch.bind(window);
    var BANNER_ID = 'connection-banner';
    var lostSince = null;

    function clock(d) {
        function two(n) { return (n < 10 ? '0' : '') + n; }
        return two(d.getHours()) + ':' + two(d.getMinutes()) + ':' + two(d.getSeconds());
    }

    function banner() {
        var el = document.getElementById(BANNER_ID);
        if (!el) {
            el = document.createElement('div');
            el.id = BANNER_ID;
            el.className = 'connection-banner';
            el.setAttribute('role', 'alert');
            el.hidden = true;
            document.body.insertBefore(el, document.body.firstChild);
        }
        return el;
    }

    function lost(why) {
        if (lostSince === null) { lostSince = new Date(); }
        document.body.classList.add('server-lost');
        var el = banner();
        el.textContent = 'The server is not answering (' + why + '). Everything on screen is stale: it shows ' +
            'the last answer, received before ' + clock(lostSince) + ', and changes made since then have no ' +
            'effect. Start the server again (growthcore serve) and reload the page.';
        el.hidden = false;
    }

    function back() {
        if (lostSince === null) { return; }
        lostSince = null;
        document.body.classList.remove('server-lost');
        banner().hidden = true;
    }

    window.fetch = function (input, init) {
        var url = typeof input === 'string' ? input : (input && input.url) || '';
        var reply = realFetch(input, init);
        if (url.indexOf('_dash-update-component') === -1) { return reply; }
        return reply.then(function (response) {
            if (response.status === 502 || response.status === 503 || response.status === 504) {
                lost('answer ' + response.status + ' from the network');
            } else {
                back();
            }
            return response;
        }, function (err) {
            lost('no connection');
            throw err;
        });
    };
})();
