"""How obstacle meshes are lit in the 3D view: a light at the camera ("headlight"), so the faces
you look at are the brightest and faces seen edge-on darken; both sides of a face are lit the
same (mesh files often have flipped normals). The plotting library's own "shaded" program lights
from a fixed direction behind the viewer's right shoulder, which leaves faces turned to the
camera at its 20 % ambient floor — a wall seen head-on was near black."""

from __future__ import annotations

from pyqtgraph.opengl.shaders import FragmentShader, ShaderProgram, VertexShader

#: Share of a face's colour it keeps however it is turned (the rest follows the angle to the camera).
AMBIENT = 0.45

HEADLIGHT = ShaderProgram("skyloom_headlight", [
    VertexShader("""
        uniform mat4 u_mvp;
        uniform mat3 u_normal;
        attribute vec4 a_position;
        attribute vec3 a_normal;
        attribute vec4 a_color;
        varying vec4 v_color;
        varying vec3 v_normal;
        void main() {
            v_normal = normalize(u_normal * a_normal);
            v_color = a_color;
            gl_Position = u_mvp * a_position;
        }
    """),
    FragmentShader(f"""
        #ifdef GL_ES
        precision mediump float;
        #endif
        varying vec4 v_color;
        varying vec3 v_normal;
        void main() {{
            float facing = abs(normalize(v_normal).z);
            gl_FragColor = vec4(v_color.rgb * ({AMBIENT} + {1.0 - AMBIENT} * facing), v_color.a);
        }}
    """),
])
