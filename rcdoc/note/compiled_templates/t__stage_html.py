from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_stage.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_stage = resolve('stage')
    l_0_ui = resolve('ui')
    try:
        t_1 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    yield '<section class="stage" id="stage-'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'id'))
    yield '">\n  <div class="stage-head">\n    <span class="badge badge-'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'status'))
    yield ' stage-badge">'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'status'))
    yield '</span>\n    <h2 class="stage-title" data-title="'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'title'))
    yield '">'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'title'))
    yield '</h2>\n    <p class="stage-meta"><span class="kind">'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'kind'))
    yield '</span> · <span class="sid">'
    yield escape(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'id'))
    yield '</span></p>\n  </div>\n'
    if (t_1(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety')) and environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety')):
        pass
        yield '  <div class="safety">\n    <p class="safety-head"><span class="safety-sign">⚠</span> '
        if environment.call(context, environment.getattr(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'get'), 'head'):
            pass
            yield escape(environment.getitem(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'head'))
        else:
            pass
            yield 'Hazardous voltage'
            if environment.getattr(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'voltage'):
                pass
                yield ': up to '
                yield escape(environment.getattr(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'voltage'))
        yield '</p>\n'
        if environment.getitem(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'items'):
            pass
            yield '    <ul>\n'
            for l_1_item in environment.getitem(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'safety'), 'items'):
                _loop_vars = {}
                pass
                yield '      <li>'
                yield escape(l_1_item)
                yield '</li>\n'
            l_1_item = missing
            yield '    </ul>\n'
        yield '  </div>\n'
    if (t_1(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'caution')) and environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'caution')):
        pass
        yield '  <div class="safety stability">\n    <p class="safety-head"><span class="safety-sign">⚠</span> '
        yield escape(environment.getattr(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'caution'), 'title'))
        yield '</p>\n    <ul>\n'
        for l_1_item in environment.getitem(environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'caution'), 'items'):
            _loop_vars = {}
            pass
            yield '      <li>'
            yield escape(l_1_item)
            yield '</li>\n'
        l_1_item = missing
        yield '    </ul>\n  </div>\n'
    if environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'notes'):
        pass
        yield '  <div class="stage-notes">\n'
        for l_1_paragraph in environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'notes'):
            _loop_vars = {}
            pass
            yield '    <p>'
            yield escape(l_1_paragraph)
            yield '</p>\n'
        l_1_paragraph = missing
        yield '  </div>\n'
    yield '  '
    yield escape(environment.call(context, environment.getattr((undefined(name='ui') if l_0_ui is missing else l_0_ui), 'blocks'), environment.getattr((undefined(name='stage') if l_0_stage is missing else l_0_stage), 'blocks')))
    yield '\n</section>\n'

blocks = {}
debug_info = '2=20&4=22&5=26&6=30&8=34&10=37&11=48&13=51&14=55&20=60&22=63&24=65&25=69&30=73&32=76&33=80&37=85'
# jinja2 3.1.6's code of templates/_stage.html, written by tools/compile_templates.py: do not edit.
