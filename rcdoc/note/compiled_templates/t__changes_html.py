from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_changes.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_changes = resolve('changes')
    l_0_ui = resolve('ui')
    try:
        t_1 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    if (t_1((undefined(name='changes') if l_0_changes is missing else l_0_changes)) and (undefined(name='changes') if l_0_changes is missing else l_0_changes)):
        pass
        yield '<section class="changes" id="changes">\n  <h2 class="changes-title" data-title="'
        yield escape(environment.getattr((undefined(name='changes') if l_0_changes is missing else l_0_changes), 'title'))
        yield '">'
        yield escape(environment.getattr((undefined(name='changes') if l_0_changes is missing else l_0_changes), 'title'))
        yield '</h2>\n  '
        yield escape(environment.call(context, environment.getattr((undefined(name='ui') if l_0_ui is missing else l_0_ui), 'blocks'), environment.getattr((undefined(name='changes') if l_0_changes is missing else l_0_changes), 'blocks')))
        yield '\n</section>\n'

blocks = {}
debug_info = '3=19&5=22&6=26'
# jinja2 3.1.6's code of templates/_changes.html, written by tools/compile_templates.py: do not edit.
